/**
 * Which outcome partitions this member reads, and through which state. Outcome partition p of
 * kafka.outcomeTopics[i] is read into the state of partition p of kafka.topics[i] (its checkpoint holds
 * both next offsets), so it can only be read where that scored partition is owned.
 *
 * When the group's assignment does not pair them (an older member made the group fall back to round
 * robin, or the two topics have different partition counts so p has no partner): an outcome partition
 * without its scored partition here is paused and named in readiness; a scored partition without its
 * outcome partition here goes on, its predictions wait and expire unmatched, and readiness names it too.
 * Not ready is the signal: the figures stay exact (nothing is counted twice or skipped), only incomplete.
 */
import type { KafkaMessage } from 'kafkajs';
import { decodeOutcomeEvent } from '../events/index.js';
import type { DecodeLimits } from '../events/index.js';
import type { PartitionState } from '../state/index.js';

export interface PairPlan {
  /** Outcome partitions to read, with the key of the scored partition whose state reads them. */
  readonly read: { readonly topic: string; readonly partition: number; readonly stateKey: string }[];
  /** Outcome partitions assigned here without their scored partition: paused. */
  readonly unpaired: { readonly topic: string; readonly partition: number }[];
  /** Scored partitions owned here whose outcome partition is not: their predictions cannot be labelled here. */
  readonly alone: { readonly topic: string; readonly partition: number }[];
}

/** Pure. `assignment` is this member's topic → partitions; `scoredOf` maps an outcome topic to its scored topic. */
export function planPairs(
  assignment: Readonly<Record<string, readonly number[]>>,
  scoredOf: ReadonlyMap<string, string>,
  outcomeOf: ReadonlyMap<string, string>,
  keyOf: (topic: string, partition: number) => string,
): PairPlan {
  const has = (topic: string, p: number): boolean => (assignment[topic] ?? []).includes(p);
  const read: PairPlan['read'][number][] = [];
  const unpaired: PairPlan['unpaired'][number][] = [];
  const alone: PairPlan['alone'][number][] = [];
  for (const [topic, partitions] of Object.entries(assignment)) {
    const scored = scoredOf.get(topic);
    const outcome = outcomeOf.get(topic);
    for (const p of partitions) {
      if (scored !== undefined) {
        if (has(scored, p)) read.push({ topic, partition: p, stateKey: keyOf(scored, p) });
        else unpaired.push({ topic, partition: p });
      } else if (outcome !== undefined && !has(outcome, p)) {
        alone.push({ topic, partition: p });
      }
    }
  }
  return { read, unpaired, alone };
}

export interface OutcomeBatchHooks {
  readonly limits: DecodeLimits;
  /** A rejected outcome message, for the dead-letter copy (when the state counted it: not a redelivery). */
  readonly rejected: (message: KafkaMessage, reason: string, field: string) => void;
}

/**
 * Applies one outcome message to the state of its pair. Offsets below the state's outcome next offset
 * are skipped by the state itself (a fetch made before the seek took effect).
 */
export function applyOutcomeMessage(state: PartitionState, message: KafkaMessage, hooks: OutcomeBatchHooks): void {
  const decoded = decodeOutcomeEvent(message.value ?? new Uint8Array(0), hooks.limits, Number(message.timestamp));
  if (!decoded.ok) {
    if (state.rejectOutcome(decoded.reason, message.offset)) hooks.rejected(message, decoded.reason, decoded.field);
    return;
  }
  if (state.applyOutcome(decoded.event, message.offset) === 'rejected') hooks.rejected(message, 'bad_label', 'label');
}
