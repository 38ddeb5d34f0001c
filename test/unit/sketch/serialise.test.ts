/** Bad serialised state is refused with HR_ERR_SKETCH_STATE_INVALID, naming the field to fix. */
import { describe, expect, it } from 'vitest';
import { isHeadroomError } from '../../../src/errors.js';
import { MarginDigest } from '../../../src/sketch/digest.js';
import { MarginSummary } from '../../../src/sketch/summary.js';
import { MarginWindows } from '../../../src/sketch/windows.js';

type Json = Record<string, unknown>;

function fieldOf(f: () => unknown): string {
  try {
    f();
  } catch (e) {
    if (!isHeadroomError(e)) throw e;
    expect(e.code).toBe('HR_ERR_SKETCH_STATE_INVALID');
    expect(e.message).toContain(String(e.context.field));
    return String(e.context.field);
  }
  throw new Error('accepted a bad state');
}

function copy<T>(x: T): T {
  return JSON.parse(JSON.stringify(x)) as T;
}

function digestState(): Json {
  const d = new MarginDigest();
  for (let i = 0; i < 3000; i += 1) d.add(i % 7 === 0 ? 0 : (i * 0.6180339887) % 1);
  return copy(d.toState()) as unknown as Json;
}

describe('digest state', () => {
  it.each<[string, (s: Json) => void, string]>([
    ['another version', (s) => (s.v = 2), 'digest.v'],
    ['no centroid list', (s) => delete s.centroids, 'digest.centroids'],
    ['an unknown scale', (s) => (s.scale = 'k7'), 'digest.scale'],
    ['a tiny compression', (s) => (s.compression = 2), 'digest.compression'],
    ['a negative weight', (s) => ((s.centroids as number[][])[1]![1] = -3), 'digest.centroids[1][1]'],
    ['a non-number mean', (s) => ((s.centroids as unknown[][])[2]![0] = 'x'), 'digest.centroids[2][0]'],
    ['a triple', (s) => (s.centroids as number[][]).splice(1, 1, [0.1, 2, 0.05]), 'digest.centroids[1]'],
    ['means out of order', (s) => (s.centroids as number[][]).reverse(), 'digest.centroids[1][0]'],
    [
      'lo not below hi',
      (s) => {
        const c = (s.centroids as number[][]).find((t) => t.length === 4)!;
        c[2] = c[3]!;
      },
      'digest.centroids',
    ],
  ])('refuses %s', (_what, spoil, field) => {
    const s = digestState();
    spoil(s);
    expect(fieldOf(() => MarginDigest.fromState(s))).toContain(field);
  });

  it('refuses something that is not an object', () => {
    expect(fieldOf(() => MarginDigest.fromState([1, 2]))).toBe('digest');
    expect(fieldOf(() => MarginDigest.fromState(null))).toBe('digest');
  });
});

describe('summary state', () => {
  function summaryState(): Json {
    const s = new MarginSummary({ thresholds: [0.1, 0.2] });
    for (let i = 0; i < 500; i += 1) s.add((i % 50) / 50);
    return copy(s.toState()) as unknown as Json;
  }

  it.each<[string, (s: Json) => void, string]>([
    ['a count that disagrees with the digest', (s) => (s.count = 499), 'summary.count'],
    ['a below count above count', (s) => ((s.below as number[])[1] = 501), 'summary.below[1]'],
    ['below counts that fall as θ rises', (s) => ((s.below as number[])[0] = 150), 'summary.below[1]'],
    ['too few below counts', (s) => (s.below as number[]).pop(), 'summary.below'],
    ['unsorted thresholds', (s) => (s.thresholds as number[]).reverse(), 'summary.thresholds'],
    ['min above max', (s) => (s.min = 2), 'summary.min'],
    ['a centroid outside [min, max]', (s) => (s.max = 0.5), 'summary.digest.points'],
    ['a pending point of no weight', (s) => (((s.digest as Json).points as number[][])[3] = [0.5, 0]), 'summary.digest.points[3][1]'],
    ['a bad nested digest', (s) => ((s.digest as Json).v = 0), 'summary.digest.v'],
  ])('refuses %s', (_what, spoil, field) => {
    const s = summaryState();
    spoil(s);
    expect(fieldOf(() => MarginSummary.fromState(s))).toContain(field);
  });
});

describe('window state', () => {
  function windowState(): Json {
    const w = new MarginWindows();
    const t0 = Date.UTC(2026, 11, 1);
    for (let k = 0; k < 4 * 60; k += 1) w.add((k % 20) / 20, t0 + k * 60_000, t0 + k * 60_000);
    return copy(w.toState()) as unknown as Json;
  }

  it.each<[string, (s: Json) => void, string]>([
    ['another version', (s) => (s.v = 9), 'window.v'],
    ['a missing config field', (s) => delete (s.config as Json).latenessMs, 'window.config.latenessMs'],
    ['an inconsistent config', (s) => ((s.config as Json).latenessMs = 3 * 3_600_000), 'window.config.latenessMs'],
    ['a bad threshold in the config', (s) => ((s.config as Json).thresholds = [0.1, 'a']), 'window.config.thresholds[1]'],
    ['a negative late count', (s) => (s.late = -1), 'window.late'],
    ['a misaligned bucket', (s) => ((s.fine as Json[])[3]!.startMs = ((s.fine as Json[])[3]!.startMs as number) + 1), 'window.fine[3].startMs'],
    ['buckets out of order', (s) => (s.fine as Json[]).reverse(), 'window.fine[1].startMs'],
    ['a fine bucket beyond the watermark', (s) => (s.watermarkMs = (s.watermarkMs as number) - 3 * 3_600_000), 'window.fine'],
    ['buckets but no watermark', (s) => (s.watermarkMs = null), 'window.watermarkMs'],
    ['a coarse bucket inside the fine span', (s) => ((s.coarse as Json[])[1]!.startMs = (s.watermarkMs as number) - ((s.watermarkMs as number) % 3_600_000)), 'window.coarse[1].startMs'],
    ['a bucket with other thresholds', (s) => (((s.fine as Json[])[0]!.summary as Json).thresholds = [0.1]), 'window.fine[0].summary'],
    ['a bad count deep inside', (s) => {
        const summary = (s.coarse as Json[])[0]!.summary as Json;
        summary.count = (summary.count as number) + 1;
      }, 'window.coarse[0].summary.count'],
  ])('refuses %s', (_what, spoil, field) => {
    const s = windowState();
    spoil(s);
    expect(fieldOf(() => MarginWindows.fromState(s))).toContain(field);
  });

  it('accepts the unspoilt state', () => {
    expect(MarginWindows.fromState(windowState()).counters().added).toBe(240);
  });
});
