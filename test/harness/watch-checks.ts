/**
 * What a running watcher must show for the events produced: every series' exact count on /metrics and
 * /api/series, and every low-margin ratio equal to the share computed in the test.
 */
import { expect } from 'vitest';
import { parseExposition, value } from '../unit/serve/exposition.js';
import type { Sample } from '../unit/serve/exposition.js';
import type { ExpectedSeries, Malformed } from './scored-events.js';
import { reasonCounts } from './scored-events.js';
import { until } from './wait.js';

export async function scrape(url: string): Promise<Sample[]> {
  const response = await fetch(`${url}/metrics`);
  expect(response.status).toBe(200);
  return parseExposition(await response.text()).samples;
}

interface ApiSeries {
  readonly model: string;
  readonly version: string;
  readonly segment: string;
  readonly events: number;
}

export async function apiSeries(url: string): Promise<ApiSeries[]> {
  const response = await fetch(`${url}/api/series`);
  expect(response.status).toBe(200);
  return ((await response.json()) as { series: ApiSeries[] }).series;
}

/** What waitUntilCounted reads of a watcher (src/stream's Watcher has it). */
interface CountedWatcher {
  url(): string | undefined;
  readonly source: { partitions(): readonly { lagMessages: number | null }[] };
}

/**
 * Waits until `total` messages are counted and every one of `partitions` has lag 0, then checks the count
 * once more: a message counted twice would push it past `total` by then.
 */
export async function waitUntilCounted(watcher: CountedWatcher, partitions: number, total: number, timeoutMs = 240_000): Promise<void> {
  const url = watcher.url() as string;
  await until(`all ${total} messages counted`, async () => countedMessages(await scrape(url)) >= total, timeoutMs);
  await until('lag 0 on every partition', () => {
    const p = watcher.source.partitions();
    return p.length === partitions && p.every((x) => x.lagMessages === 0);
  });
  expect(countedMessages(await scrape(url))).toBe(total);
}

/** Sum of `headroom_events_total{segment="all"}` plus every rejection: the messages counted so far. */
export function countedMessages(samples: readonly Sample[]): number {
  let n = 0;
  for (const s of samples) {
    if (s.name === 'headroom_events_total' && s.labels.segment === 'all') n += s.value;
    if (s.name === 'headroom_events_rejected_total') n += s.value;
  }
  return n;
}

/**
 * Every expected series with its exact count and, in `window` (which must hold every event), its
 * low-margin ratio at each θ; no series and no rejection reason beyond the expected ones.
 */
export async function expectWatcherShows(url: string, expected: ReadonlyMap<string, ExpectedSeries>, window: string, rejected: readonly Malformed[] = []): Promise<void> {
  const samples = await scrape(url);
  for (const e of expected.values()) {
    const labels = { model: e.model, version: e.version, segment: e.segment };
    expect(value(samples, 'headroom_events_total', labels), JSON.stringify(labels)).toBe(e.events);
    expect(value(samples, 'headroom_window_events', { ...labels, window }), `${JSON.stringify(labels)} in ${window}`).toBe(e.events);
    for (const [t, below] of e.below) {
      const got = value(samples, 'headroom_low_margin_ratio', { ...labels, window, threshold: String(t) });
      expect(got, `${JSON.stringify(labels)} θ=${t}`).toBeCloseTo(below / e.events, 12);
    }
  }
  expect(samples.filter((s) => s.name === 'headroom_events_total')).toHaveLength(expected.size);

  const reasons = reasonCounts(rejected);
  for (const [reason, n] of reasons) expect(value(samples, 'headroom_events_rejected_total', { reason }), reason).toBe(n);
  expect(samples.filter((s) => s.name === 'headroom_events_rejected_total' && s.value > 0)).toHaveLength(reasons.size);

  const api = await apiSeries(url);
  expect(api).toHaveLength(expected.size);
  for (const s of api) expect(s.events, `${s.model} ${s.version} ${s.segment}`).toBe(expected.get(`${s.model}\u0000${s.version}\u0000${s.segment}`)?.events);
}
