/**
 * Reading one topic between two times, for `headroom replay --topic`. The I/O edge: offsets are looked up
 * per partition by timestamp (admin.fetchTopicOffsetsByTimestamp: the first offset whose message
 * timestamp is at or after the time), and the end of each partition is fixed when the replay starts
 * (the smaller of the `until` offset and the high watermark then), so messages produced during the
 * replay are not read and the replay ends. The messages are read by a consumer of a group of its own
 * that commits nothing, seeking each partition to its start when the group hands it over.
 */
import { randomBytes } from 'node:crypto';
import type { Admin, Consumer, ConsumerGroupJoinEvent, Kafka, KafkaMessage } from 'kafkajs';
import { HeadroomError, isHeadroomError } from '../errors.js';

export interface PartitionRange {
  readonly partition: number;
  /** First offset to read. */
  readonly start: string;
  /** First offset not to read. */
  readonly end: string;
}

function kafkaError(step: string, cause: unknown): HeadroomError {
  if (isHeadroomError(cause)) return cause;
  return new HeadroomError('HR_ERR_REPLAY_KAFKA', `${step}: ${cause instanceof Error ? cause.message : String(cause)}`, { cause, context: { step } });
}

const bigMax = (a: bigint, b: bigint): bigint => (a > b ? a : b);
const bigMin = (a: bigint, b: bigint): bigint => (a < b ? a : b);

/** The offsets of [sinceMs, untilMs) on every partition of `topic`, sorted by partition. */
export async function planRange(admin: Admin, topic: string, sinceMs: number, untilMs: number): Promise<PartitionRange[]> {
  try {
    const [bounds, from, to] = [await admin.fetchTopicOffsets(topic), await admin.fetchTopicOffsetsByTimestamp(topic, sinceMs), await admin.fetchTopicOffsetsByTimestamp(topic, untilMs)];
    return bounds
      .map((b) => {
        const low = BigInt(b.low);
        const high = BigInt(b.high);
        const start = bigMax(low, BigInt(from.find((f) => f.partition === b.partition)?.offset ?? b.high));
        const end = bigMin(high, BigInt(to.find((t) => t.partition === b.partition)?.offset ?? b.high));
        return { partition: b.partition, start: start.toString(), end: (end < start ? start : end).toString() };
      })
      .sort((a, b) => a.partition - b.partition);
  } catch (error) {
    throw kafkaError(`looking up the offsets of ${topic} between ${new Date(sinceMs).toISOString()} and ${new Date(untilMs).toISOString()}`, error);
  }
}

export interface RangeReader {
  /** Called for each message in [start, end) of its partition, in offset order per partition. */
  readonly onMessage: (partition: number, message: KafkaMessage) => void;
  /** Called once per partition when its end is reached (at once for an empty range). */
  readonly onPartitionDone: (partition: number) => void;
}

/** Reads every range to its end, then leaves: a group of its own, nothing committed, deleted afterwards. */
export async function readRange(kafka: Kafka, admin: Admin, topic: string, ranges: readonly PartitionRange[], reader: RangeReader): Promise<void> {
  const groupId = `headroom-replay-${randomBytes(6).toString('hex')}`;
  const pending = new Map(ranges.filter((r) => BigInt(r.start) < BigInt(r.end)).map((r) => [r.partition, { start: BigInt(r.start), end: BigInt(r.end) }]));
  for (const r of ranges) if (!pending.has(r.partition)) reader.onPartitionDone(r.partition);
  if (pending.size === 0) return;
  const consumer: Consumer = kafka.consumer({ groupId, allowAutoTopicCreation: false, maxBytesPerPartition: 4 * 1024 * 1024 });
  let finish: () => void = () => {};
  let fail: (error: unknown) => void = () => {};
  const done = new Promise<void>((resolve, reject) => {
    finish = resolve;
    fail = reject;
  });
  const markDone = (partition: number): void => {
    if (!pending.delete(partition)) return;
    reader.onPartitionDone(partition);
    consumer.pause([{ topic, partitions: [partition] }]);
    if (pending.size === 0) finish();
  };
  // kafkajs applies a seek made inside this listener at the next fetch (as the watcher relies on).
  consumer.on(consumer.events.GROUP_JOIN, (event: ConsumerGroupJoinEvent) => {
    for (const partition of event.payload.memberAssignment[topic] ?? []) {
      const range = pending.get(partition);
      if (range !== undefined) consumer.seek({ topic, partition, offset: range.start.toString() });
    }
  });
  consumer.on(consumer.events.CRASH, (event) => {
    if (event.payload.restart !== true) fail(event.payload.error);
  });
  try {
    await consumer.connect();
    await consumer.subscribe({ topics: [topic], fromBeginning: true });
    await consumer.run({
      autoCommit: false,
      eachBatch: async ({ batch, heartbeat }) => {
        const range = pending.get(batch.partition);
        if (range === undefined) return;
        for (const message of batch.messages) {
          const at = BigInt(message.offset);
          if (at < range.start) continue; // fetched before the seek took effect
          if (at >= range.end) break;
          reader.onMessage(batch.partition, message);
        }
        // Compaction or transaction markers can leave the last offsets before the end without a message.
        if (batch.messages.length > 0 && BigInt(batch.lastOffset()) + 1n >= range.end) markDone(batch.partition);
        else if (batch.messages.some((m) => BigInt(m.offset) >= range.end)) markDone(batch.partition);
        await heartbeat();
      },
    });
    await done;
  } catch (error) {
    throw kafkaError(`reading ${topic}`, error);
  } finally {
    await consumer.disconnect().catch(() => undefined);
    await admin.deleteGroups([groupId]).catch(() => undefined);
  }
}
