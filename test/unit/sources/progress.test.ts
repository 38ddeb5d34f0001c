import { describe, expect, it } from 'vitest';
import { createProgress, formatBytes, PROGRESS_MIN_BYTES } from '../../../src/sources/index.js';

function sink(isTTY: boolean) {
  const written: string[] = [];
  return { written, output: { isTTY, write: (text: string) => written.push(text) } };
}

describe('progress', () => {
  it('off a terminal, writes one plain line at each tenth of the bytes', () => {
    const { written, output } = sink(false);
    const total = PROGRESS_MIN_BYTES * 2;
    const progress = createProgress('reading', total, output);
    // Uneven steps: 3 % at a time, so some steps cross no tenth and one crosses into the next.
    for (let read = 0; read < total; read += total * 0.03) progress.add(Math.min(total * 0.03, total - read));
    progress.stop();
    expect(written).toHaveLength(10);
    expect(written[0]).toBe(`reading: 10% (${formatBytes(Math.ceil(0.1 / 0.03) * total * 0.03)} of 32.0 MiB)\n`);
    expect(written[9]).toMatch(/^reading: 100% \(32\.0 MiB of 32\.0 MiB\)\n$/);
  });

  it('shows nothing for small inputs, or when turned off', () => {
    for (const [total, enabled] of [[PROGRESS_MIN_BYTES - 1, true], [PROGRESS_MIN_BYTES * 4, false]] as const) {
      const { written, output } = sink(false);
      const progress = createProgress('reading', total, output, enabled);
      progress.add(total);
      progress.stop();
      expect(written).toEqual([]);
    }
  });

  it('formats byte counts in binary units', () => {
    expect(formatBytes(512)).toBe('512 B');
    expect(formatBytes(1536)).toBe('1.5 KiB');
    expect(formatBytes(5 * 1024 ** 3)).toBe('5.00 GiB');
  });
  it('adds the event rate to each plain line when given a clock, and writes amounts as told', () => {
    const { written, output } = sink(false);
    let now = 0;
    const progress = createProgress('replaying', 1_000, output, true, { minTotal: 100, formatAmount: (n) => `${n} messages`, clockMs: () => now });
    now = 2_000;
    progress.count(5_000);
    progress.add(500);
    progress.stop();
    expect(written).toEqual(['replaying: 50% (500 messages of 1000 messages, 2.5k events/s)\n']);
  });
});
