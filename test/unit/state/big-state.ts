/**
 * A partition state the size of a busy production one, for the checkpoint-record sizes (bench) and
 * the multi-MB round trips of the Kafka store: one model with a `line` segment key, every event in the
 * `all` series and its line's, margins bunched near 1 as a confident classifier's are, and event time
 * moving one minute per `perMinute` events, so every 1-minute bucket of the fine tier gets its digest.
 */
import { PartitionState } from '../../../src/state/partition-state.js';
import type { PartitionStateJson } from '../../../src/state/partition-state.js';
import { uniform } from '../sketch/samples.js';
import { marginsOf, MIN, scored, T0 } from './events.js';

export interface BigStateOptions {
  /** Minutes of event time; 130 fills the default 2 h fine tier. */
  readonly minutes: number;
  readonly perMinute: number;
  /** Distinct values of `line`; the state holds lines + 1 series. */
  readonly lines: number;
  readonly seed?: number;
}

export function bigState(topic: string, partition: number, options: BigStateOptions): PartitionStateJson {
  const s = new PartitionState({ topic, partition, models: [{ name: 'parcel-damage', segmentKeys: ['line'] }] });
  const seed = options.seed ?? 7;
  const n = options.minutes * options.perMinute;
  for (let i = 0; i < n; i += 1) {
    const timeMs = T0 + Math.floor((i * MIN) / options.perMinute);
    const p = 0.5 + 0.5 * uniform(seed, i) ** 0.125 * (uniform(seed + 1, i) < 0.5 ? -1 : 1);
    const e = scored(p, { model: 'parcel-damage', version: '2026.11.3', timeMs, segment: { line: `L${i % options.lines}` } });
    s.apply(e, marginsOf(e), String(i), timeMs);
  }
  return s.toState();
}
