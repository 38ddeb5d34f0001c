/**
 * One scored message into a partition state: decode → margins → apply, or a counted rejection. The one
 * path every live source takes (the watcher's Kafka batches, the embedded demo), so their figures agree
 * by construction. Pure and synchronous; the caller passes the clock.
 */
import { decodeScoredEvent } from '../events/index.js';
import type { DecodeLimits, RejectionReason } from '../events/index.js';
import { measureMargins } from '../margin/index.js';
import type { PartitionState } from '../state/index.js';

export interface Ingested {
  readonly reason: RejectionReason;
  readonly field: string;
  /**
   * True when this call counted the rejection (false for an offset the state had already passed): only
   * then is a dead-letter copy due, so a redelivered message is never copied twice.
   */
  readonly counted: boolean;
}

/**
 * Applies the message at `offset` to `state`. Returns undefined when the event was applied (or the
 * offset was already counted), the rejection otherwise. `fallbackTimeMs` stands in for an absent `time`
 * (the Kafka message timestamp).
 */
export function ingestScored(state: PartitionState, value: Uint8Array, offset: string, limits: DecodeLimits, fallbackTimeMs: number, nowMs: number): Ingested | undefined {
  const decoded = decodeScoredEvent(value, limits, fallbackTimeMs);
  if (!decoded.ok) return { reason: decoded.reason, field: decoded.field, counted: state.reject(decoded.reason, offset) };
  const margins = measureMargins(decoded.event.score, decoded.event.label);
  if (!margins.ok) return { reason: margins.reason, field: margins.field, counted: state.reject(margins.reason, offset) };
  state.apply(decoded.event, margins, offset, nowMs);
  return undefined;
}
