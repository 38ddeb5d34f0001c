import { describe, expect, it } from 'vitest';
import { createLogNotifier, noticeLogFields } from '../../../src/notify/index.js';
import { capturedLogger, notice } from './fixtures.js';

describe('createLogNotifier', () => {
  it('writes one line per transition: warn when entering firing, info otherwise, with the notice fields', () => {
    const { logger, lines } = capturedLogger();
    const notifier = createLogNotifier(logger);
    for (const seq of [1, 2, 3, 4, 5]) notifier.notify(notice(seq));
    // easing → firing again is also a move into firing.
    const refire = { ...notice(3), transition: { ...notice(3).transition, from: 'easing' as const, to: 'firing' as const, seq: 4, id: 'hr-0000000000000004' } };
    notifier.notify(refire);
    expect(lines.map((l) => `${l.to}:${l.level}`)).toEqual(['brewing:30', 'firing:40', 'easing:30', 'resting:30', 'calm:30', 'firing:40']);
    expect(lines[1]).toMatchObject({ component: 'alerts', event: 'alert_transition', ...noticeLogFields(notice(2)), msg: 'alert low-margin-rise parcel-damage/2026.11.3/all: brewing -> firing' });
    expect(notifier.counts()).toEqual({ sent: 6, failed: 0, dropped: 0, pending: 0 });
  });

  it('says once that it is closed, however many notices come after', async () => {
    const { logger, lines } = capturedLogger();
    const notifier = createLogNotifier(logger);
    await notifier.close();
    for (const seq of [1, 2, 3]) notifier.notify(notice(seq));
    expect(lines.map((l) => l.event)).toEqual(['alert_notice_after_close']);
    expect(notifier.counts().dropped).toBe(3);
  });
});
