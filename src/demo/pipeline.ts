/**
 * The embedded demo's event path, pure: scenario events are written in the wire format and fed through
 * the watcher's own ingest (decode → margins → PartitionState.apply), one PartitionState per line as if
 * the scorer keyed its Kafka messages by line, three "partitions" merged by mergeView like the watcher's.
 * The clock is scenario time, passed in.
 */
import type { HeadroomConfig } from '../config/index.js';
import { PartitionState } from '../state/index.js';
import { ingestScored } from '../stream/index.js';
import { PARCEL_LINES } from './parcels.js';
import type { ScenarioEvent } from './scenario.js';

/** The topic name the embedded partitions carry (shown in /api and nowhere else). */
export const EMBEDDED_TOPIC = 'embedded-parcel-scores';

export class EmbeddedPartitions {
  private readonly states: PartitionState[];
  private readonly offsets: bigint[];
  private readonly encoder = new TextEncoder();

  constructor(private readonly config: HeadroomConfig) {
    this.states = PARCEL_LINES.map((_, partition) => new PartitionState({ topic: EMBEDDED_TOPIC, partition, models: config.models }));
    this.offsets = PARCEL_LINES.map(() => 0n);
  }

  /** Feeds `events` (oldest first) at scenario time `nowMs`; returns how many were rejected (none, unless the scenario is broken). */
  feed(events: readonly ScenarioEvent[], nowMs: number): number {
    let rejected = 0;
    for (const event of events) {
      const partition = Math.max(0, PARCEL_LINES.indexOf(event.line));
      const offset = this.offsets[partition] as bigint;
      this.offsets[partition] = offset + 1n;
      const bytes = this.encoder.encode(JSON.stringify(event.wire));
      if (ingestScored(this.states[partition] as PartitionState, bytes, String(offset), this.config.decode, event.timeMs, nowMs) !== undefined) rejected += 1;
    }
    return rejected;
  }

  all(): readonly PartitionState[] {
    return this.states;
  }
}
