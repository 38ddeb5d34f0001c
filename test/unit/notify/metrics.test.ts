/** The notification families on a registry of our own, read back through the text format (and promtool when present). */
import { spawnSync } from 'node:child_process';
import { Registry } from 'prom-client';
import { describe, expect, it } from 'vitest';
import { createLogNotifier, createWebhookNotifier, registerNotificationMetrics } from '../../../src/notify/index.js';
import { find, parseExposition, value } from '../serve/exposition.js';
import { capturedLogger, notice } from './fixtures.js';
import { startReceiver } from './receiver.js';

async function scrapeAfterTraffic() {
  const receiver = await startReceiver((i) => ({ status: i === 1 ? 400 : 200 }));
  const { logger } = capturedLogger();
  const log = createLogNotifier(logger);
  const webhook = createWebhookNotifier({ url: receiver.url, logger, retries: 0 });
  const registry = new Registry();
  const names = registerNotificationMetrics(registry, [log, webhook]);
  for (const seq of [1, 2, 3]) {
    log.notify(notice(seq));
    webhook.notify(notice(seq));
  }
  await webhook.flush(5_000);
  await webhook.close();
  webhook.notify(notice(4));
  await receiver.close();
  const text = await registry.metrics();
  return { names, text, ...parseExposition(text) };
}

describe('registerNotificationMetrics', () => {
  it('exports each notifier\'s counts by outcome, and what is pending', async () => {
    const { names, samples, types } = await scrapeAfterTraffic();
    expect(names).toEqual(['headroom_alert_notifications_total', 'headroom_alert_notifications_pending']);
    expect(types.get('headroom_alert_notifications_total')).toBe('counter');
    const total = (notifier: string, outcome: string) => value(samples, 'headroom_alert_notifications_total', { notifier, outcome });
    expect([total('log', 'sent'), total('log', 'failed'), total('log', 'dropped')]).toEqual([3, 0, 0]);
    expect([total('webhook', 'sent'), total('webhook', 'failed'), total('webhook', 'dropped')]).toEqual([2, 1, 1]);
    expect(find(samples, 'headroom_alert_notifications_pending').map((s) => [s.labels.notifier, s.value])).toEqual([
      ['log', 0],
      ['webhook', 0],
    ]);
  });
});

const promtool = spawnSync('promtool', ['--version'], { encoding: 'utf8' });
const havePromtool = promtool.error === undefined && promtool.status === 0;

describe.skipIf(!havePromtool && process.env.CI !== 'true')('promtool check metrics', () => {
  it('finds nothing to complain about', async () => {
    const { text } = await scrapeAfterTraffic();
    const result = spawnSync('promtool', ['check', 'metrics'], { input: text, encoding: 'utf8' });
    expect(result.stdout + result.stderr).toBe('');
    expect(result.status).toBe(0);
  });
});
