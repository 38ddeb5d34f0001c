/**
 * Checkpoints on a compacted Kafka topic, for several `headroom watch` instances sharing a group: when
 * a partition moves to another watcher, the new owner finds the previous owner's last save there.
 * The record layout (keys, gzip, chunks and the manifest that commits a big save) is kafka-records.ts.
 *
 * Reading. Each store runs its own consumer over the whole state topic, in a consumer group of its own
 * (`readerGroupId`, never committed), and keeps the latest record of every key in memory. Before
 * load() and list() answer, it fetches the topic's end offsets and waits until its consumer has read
 * up to them, so an answer includes every save acknowledged before the call, whichever instance made
 * it. The memory held is about the gzipped size of every checkpoint on the topic.
 *
 * Writing. save() gzips the state, produces its chunks (each alone, so each is its own record batch)
 * and then the record at the checkpoint key, all with acks=-1 (every in-sync replica), and resolves once
 * the last is acknowledged and the store's own view holds it. Saves of one key from this store run one
 * after another. The topic is created if missing: cleanup.policy=compact, replication factor
 * min(3, brokers) unless given, min.insync.replicas 2 with 3 replicas or more; an existing topic that is not
 * compact-only is refused, since time-based deletion would drop the checkpoints of quiet partitions.
 *
 * Do not add partitions to the state topic: a key's partition is its hash modulo the count, and
 * records written before the change would no longer be ordered against those after it.
 */
import { randomBytes, randomUUID } from 'node:crypto';
import { promisify } from 'node:util';
import { gunzip, gzip } from 'node:zlib';
import kafkajs from 'kafkajs';
import type { Admin, Consumer, EachBatchPayload, IHeaders, Kafka, Producer } from 'kafkajs';
import type { Logger } from 'pino';
import { HeadroomError, isHeadroomError } from '../errors.js';
import { checkGroup, checkKey, closedError, corrupt, decodeCheckpoint, encodeCheckpoint, sortKeys, trackCall } from './checkpoint-store.js';
import type { CheckpointKey, CheckpointStore } from './checkpoint-store.js';
import { badArgument } from './fail.js';
import { DEFAULT_CHUNK_BYTES, KIND_HEADER, parseChunkKey, parseStateKey, planSave, recordWhere, staleChunkKeys, stateKey, statePartitionOf, unpackHead } from './kafka-records.js';
import type { OutRecord, StoredRecord } from './kafka-records.js';
import type { PartitionStateJson } from './partition-state.js';

export const DEFAULT_STATE_TOPIC = 'headroom-state';
// kafkajs is CommonJS and Node's ESM loader finds only some of its named exports; this one it misses.
const { ConfigResourceTypes } = kafkajs;
const gzipAsync = promisify(gzip);
const gunzipAsync = promisify(gunzip);
/** Room left in a record batch for the key, headers and batch framing when a chunk is sized to the topic's limit. */
const RECORD_OVERHEAD_BYTES = 16 * 1024;

export interface KafkaCheckpointStoreOptions {
  /** The client the store makes its admin, producer and consumer from. */
  readonly kafka: Kafka;
  readonly logger: Logger;
  /** Default `headroom-state`. */
  readonly topic?: string;
  /** This store's reader group; unique per instance. Default `headroom-checkpoint-reader.<uuid>`. */
  readonly readerGroupId?: string;
  /** Partitions when the store creates the topic; default 1. */
  readonly partitions?: number;
  /** Replication factor when the store creates the topic; default min(3, brokers in the cluster). */
  readonly replicationFactor?: number;
  /** Largest chunk of gzipped state in one record; default 512 KiB, lowered to fit the topic's max.message.bytes. */
  readonly chunkBytes?: number;
  /** gzip level, 1 (fastest, the default: about 5% bigger than 6 and 3 times faster) to 9. */
  readonly gzipLevel?: number;
  /** How long load() and list() wait for the reader to reach the topic's end; default 30 s. */
  readonly readTimeoutMs?: number;
}

interface Entry extends StoredRecord {
  readonly partition: number;
  readonly offset: bigint;
}

interface Waiter {
  readonly done: () => boolean;
  readonly resolve: () => void;
  readonly reject: (error: HeadroomError) => void;
}

function ioError(detail: string, cause?: unknown): HeadroomError {
  const why = cause === undefined ? '' : `: ${cause instanceof Error ? cause.message : String(cause)}`;
  return new HeadroomError('HR_ERR_CHECKPOINT_IO', `${detail}${why}`, cause === undefined ? {} : { cause });
}

function kindOf(headers: IHeaders | undefined): string | undefined {
  const value = headers?.[KIND_HEADER];
  if (value === undefined) return undefined;
  return (Array.isArray(value) ? value[0] : value)?.toString();
}

function positive(field: string, value: number | undefined, fallback: number, max = Number.MAX_SAFE_INTEGER): number {
  if (value === undefined) return fallback;
  if (!Number.isSafeInteger(value) || value < 1 || value > max) throw badArgument(field, `must be a whole number from 1 to ${max}`, value);
  return value;
}

export class KafkaCheckpointStore implements CheckpointStore {
  readonly topic: string;
  readonly readerGroupId: string;
  readonly shared = true;
  private readonly kafka: Kafka;
  private readonly log: Logger;
  private readonly createPartitions: number;
  private readonly replicationFactor: number | undefined;
  private chunkBytes: number;
  private readonly gzipLevel: number;
  private readonly readTimeoutMs: number;

  private admin: Admin | undefined;
  private producer: Producer | undefined;
  private consumer: Consumer | undefined;
  private partitionCount = 1;
  private starting: Promise<void> | undefined;
  private closing: Promise<void> | undefined;
  private readerFailure: HeadroomError | undefined;
  private readonly pending = new Set<Promise<unknown>>();
  private readonly saving = new Map<string, Promise<unknown>>();
  /** The latest record of every key read or written; tombstones kept, so an older record cannot come back. */
  private readonly view = new Map<string, Entry>();
  /** Next offset to read, per partition of the state topic. */
  private readonly position = new Map<number, bigint>();
  private readonly waiters = new Set<Waiter>();

  constructor(options: KafkaCheckpointStoreOptions) {
    this.kafka = options.kafka;
    this.topic = options.topic ?? DEFAULT_STATE_TOPIC;
    if (typeof this.topic !== 'string' || this.topic === '') throw badArgument('topic', 'must be a non-empty topic name', this.topic);
    this.readerGroupId = options.readerGroupId ?? `headroom-checkpoint-reader.${randomUUID()}`;
    this.createPartitions = positive('partitions', options.partitions, 1);
    this.replicationFactor = options.replicationFactor === undefined ? undefined : positive('replicationFactor', options.replicationFactor, 1);
    this.chunkBytes = positive('chunkBytes', options.chunkBytes, DEFAULT_CHUNK_BYTES);
    this.gzipLevel = positive('gzipLevel', options.gzipLevel, 1, 9);
    this.readTimeoutMs = positive('readTimeoutMs', options.readTimeoutMs, 30_000);
    this.log = options.logger.child({ component: 'checkpoints', stateTopic: this.topic });
  }

  /** Makes the topic if missing, connects and reads the topic to its end. Every other call starts the store too. */
  start(): Promise<void> {
    return this.track(() => this.ready());
  }

  load(group: string, topic: string, partition: number): Promise<PartitionStateJson | undefined> {
    return this.track(async () => {
      checkKey(group, topic, partition);
      await this.ready();
      await this.catchUp();
      const key = stateKey(group, topic, partition);
      const head = this.view.get(key);
      if (head === undefined || head.value === null) return undefined;
      const packed = unpackHead(key, head, (chunk) => this.view.get(chunk));
      let text: string;
      try {
        text = (await gunzipAsync(packed)).toString('utf8');
      } catch (error) {
        throw corrupt(head.where, `is not gzip data (${error instanceof Error ? error.message : String(error)})`, error);
      }
      return decodeCheckpoint(text, head.where, topic, partition);
    });
  }

  save(group: string, topic: string, partition: number, state: PartitionStateJson): Promise<void> {
    return this.track(async () => {
      checkKey(group, topic, partition);
      const text = encodeCheckpoint(topic, partition, state);
      await this.ready();
      const key = stateKey(group, topic, partition);
      const previous = this.saving.get(key) ?? Promise.resolve();
      const run = previous.then(
        () => this.write(key, text),
        () => this.write(key, text),
      );
      this.saving.set(key, run);
      try {
        await run;
      } finally {
        if (this.saving.get(key) === run) this.saving.delete(key);
      }
    });
  }

  /** The state topic partition and offset of the key's latest record, as far as read: no catch-up, no gunzip. */
  revision(group: string, topic: string, partition: number): string | undefined {
    checkKey(group, topic, partition);
    const head = this.view.get(stateKey(group, topic, partition));
    return head === undefined || head.value === null ? undefined : `${head.partition}:${head.offset}`;
  }

  list(group: string): Promise<CheckpointKey[]> {
    return this.track(async () => {
      checkGroup(group);
      await this.ready();
      await this.catchUp();
      const keys: CheckpointKey[] = [];
      for (const [key, entry] of this.view) {
        const parts = entry.value === null ? undefined : parseStateKey(key);
        if (parts !== undefined && parts.group === group) keys.push({ topic: parts.topic, partition: parts.partition });
      }
      return sortKeys(keys);
    });
  }

  /** Waits for calls under way, then disconnects; idempotent. */
  close(): Promise<void> {
    this.closing ??= (async () => {
      await Promise.allSettled([...this.pending]);
      this.failWaiters(closedError());
      await Promise.allSettled([this.consumer?.disconnect(), this.producer?.disconnect(), this.admin?.disconnect()]);
    })();
    return this.closing;
  }

  private track<T>(work: () => Promise<T>): Promise<T> {
    return trackCall(this.pending, this.closing !== undefined, work);
  }

  private ready(): Promise<void> {
    this.starting ??= this.connect().catch(async (error: unknown) => {
      // A later call tries again from scratch (the broker may be back by then).
      this.starting = undefined;
      await Promise.allSettled([this.consumer?.disconnect(), this.producer?.disconnect(), this.admin?.disconnect()]);
      this.consumer = this.producer = this.admin = undefined;
      throw isHeadroomError(error) ? error : ioError(`cannot use the state topic ${this.topic}`, error);
    });
    return this.starting;
  }

  private async connect(): Promise<void> {
    this.readerFailure = undefined;
    const admin = (this.admin = this.kafka.admin());
    await admin.connect();
    await this.ensureTopic(admin);
    const metadata = await admin.fetchTopicMetadata({ topics: [this.topic] });
    this.partitionCount = Math.max(1, metadata.topics[0]?.partitions.length ?? 1);
    const producer = (this.producer = this.kafka.producer({ allowAutoTopicCreation: false }));
    await producer.connect();
    // A short fetch wait: disconnect waits for the fetch under way, and close() sits on a watcher's shutdown path.
    const consumer = (this.consumer = this.kafka.consumer({ groupId: this.readerGroupId, allowAutoTopicCreation: false, maxWaitTimeInMs: 1_000 }));
    consumer.on(consumer.events.END_BATCH_PROCESS, ({ payload }) => {
      // Also sent for batches kafkajs filtered to nothing, so the position passes them too.
      this.advance(payload.partition, BigInt(payload.lastOffset) + 1n);
    });
    consumer.on(consumer.events.CRASH, ({ payload }) => {
      if (payload.restart) return;
      this.readerFailure = ioError(`the reader of ${this.topic} stopped`, payload.error);
      this.log.error({ err: payload.error }, 'state topic reader stopped; load and list will fail');
      this.failWaiters(this.readerFailure);
    });
    await consumer.connect();
    await consumer.subscribe({ topics: [this.topic], fromBeginning: true });
    await consumer.run({ autoCommit: false, eachBatch: (payload) => this.read(payload) });
    await this.catchUp();
    this.log.info({ partitions: this.partitionCount, keys: this.view.size, readerGroupId: this.readerGroupId, chunkBytes: this.chunkBytes }, 'state topic read to its end');
  }

  private async ensureTopic(admin: Admin): Promise<void> {
    let justCreated = false;
    if (!(await admin.listTopics()).includes(this.topic)) {
      justCreated = true;
      const brokers = (await admin.describeCluster()).brokers.length;
      const replicationFactor = this.replicationFactor ?? Math.max(1, Math.min(3, brokers));
      const created = await admin.createTopics({
        waitForLeaders: true,
        topics: [
          {
            topic: this.topic,
            numPartitions: this.createPartitions,
            replicationFactor,
            configEntries: [
              { name: 'cleanup.policy', value: 'compact' },
              // Common practice: with 3 replicas, a save acknowledged by 2 survives the loss of one broker.
              { name: 'min.insync.replicas', value: replicationFactor >= 3 ? '2' : '1' },
            ],
          },
        ],
      });
      // false: another watcher made it first, which is fine.
      this.log.info({ partitions: this.createPartitions, replicationFactor, created }, 'state topic created');
    }
    const describe = async () => {
      const described = await admin.describeConfigs({
        includeSynonyms: false,
        resources: [{ type: ConfigResourceTypes.TOPIC, name: this.topic, configNames: ['cleanup.policy', 'max.message.bytes'] }],
      });
      const entries = described.resources[0]?.configEntries ?? [];
      return { entries, policy: entries.find((e) => e.configName === 'cleanup.policy')?.configValue ?? '' };
    };
    let { entries, policy } = await describe();
    // A topic created a moment ago can still answer with the broker's defaults (seen on a loaded broker):
    // ask again for a while before calling the policy wrong.
    for (let i = 0; justCreated && policy.trim() !== 'compact' && i < 40; i += 1) {
      await new Promise((resolve) => setTimeout(resolve, 250));
      ({ entries, policy } = await describe());
    }
    if (policy.trim() !== 'compact') {
      throw new HeadroomError(
        'HR_ERR_CHECKPOINT_TOPIC',
        `${this.topic} has cleanup.policy=${policy || '(unknown)'}; checkpoints need cleanup.policy=compact alone (time-based deletion would drop the checkpoints of quiet partitions): change the topic, or set checkpoint.topic to a new name and headroom creates it`,
        { context: { topic: this.topic, policy } },
      );
    }
    const maxMessageBytes = Number(entries.find((e) => e.configName === 'max.message.bytes')?.configValue);
    if (Number.isSafeInteger(maxMessageBytes) && maxMessageBytes - RECORD_OVERHEAD_BYTES < this.chunkBytes) {
      this.chunkBytes = Math.max(1024, maxMessageBytes - RECORD_OVERHEAD_BYTES);
      this.log.info({ maxMessageBytes, chunkBytes: this.chunkBytes }, 'chunks made smaller to fit the topic');
    }
  }

  private async read({ batch }: EachBatchPayload): Promise<void> {
    for (const message of batch.messages) {
      if (message.key === null) continue; // not ours: every headroom record has a key
      const key = message.key.toString('utf8');
      // Copied: a value is a slice of the whole fetch response, which would otherwise stay in memory.
      const value = message.value === null ? null : Buffer.from(message.value);
      this.remember(key, value, kindOf(message.headers), batch.partition, BigInt(message.offset));
    }
  }

  private remember(key: string, value: Buffer | null, kind: string | undefined, partition: number, offset: bigint): void {
    const known = this.view.get(key);
    if (known !== undefined && known.partition === partition && known.offset >= offset) return;
    this.view.set(key, { value, kind, partition, offset, where: recordWhere(this.topic, partition, offset, key) });
  }

  private advance(partition: number, next: bigint): void {
    if ((this.position.get(partition) ?? -1n) >= next) return;
    this.position.set(partition, next);
    for (const waiter of [...this.waiters]) {
      if (waiter.done()) {
        this.waiters.delete(waiter);
        waiter.resolve();
      }
    }
  }

  private failWaiters(error: HeadroomError): void {
    for (const waiter of [...this.waiters]) {
      this.waiters.delete(waiter);
      waiter.reject(error);
    }
  }

  /** Waits until the reader has passed every offset that existed when called. */
  private async catchUp(): Promise<void> {
    if (this.readerFailure !== undefined) throw this.readerFailure;
    let ends: Array<{ partition: number; high: string; low: string }>;
    try {
      ends = await (this.admin as Admin).fetchTopicOffsets(this.topic);
    } catch (error) {
      throw ioError(`cannot fetch the end offsets of ${this.topic}`, error);
    }
    const targets = ends.filter((e) => BigInt(e.high) > BigInt(e.low)).map((e) => [e.partition, BigInt(e.high)] as const);
    const done = (): boolean => targets.every(([partition, high]) => (this.position.get(partition) ?? -1n) >= high);
    if (done()) return;
    await new Promise<void>((resolve, reject) => {
      const timer = setTimeout(() => {
        this.waiters.delete(waiter);
        const behind = targets.filter(([p, high]) => (this.position.get(p) ?? -1n) < high).map(([p, high]) => `${p}: at ${this.position.get(p) ?? 'start'} of ${high}`);
        reject(ioError(`the reader of ${this.topic} did not reach the end within ${this.readTimeoutMs} ms (partition ${behind.join(', ')})`));
      }, this.readTimeoutMs);
      const waiter: Waiter = {
        done,
        resolve: () => {
          clearTimeout(timer);
          resolve();
        },
        reject: (error) => {
          clearTimeout(timer);
          reject(error);
        },
      };
      this.waiters.add(waiter);
    });
  }

  private async write(key: string, text: string): Promise<void> {
    const packed = await gzipAsync(text, { level: this.gzipLevel });
    const saveId = randomBytes(8).toString('hex');
    const plan = planSave(key, packed, saveId, this.chunkBytes);
    const partition = statePartitionOf(key, this.partitionCount);
    const replaced = this.view.get(key);
    await Promise.all(plan.chunks.map((chunk) => this.produce(partition, [chunk])));
    await this.produce(partition, [plan.head]);
    if (plan.chunks.length > 0) this.log.debug({ key, chunks: plan.chunks.length, bytes: packed.length }, 'checkpoint saved in chunks');
    const chunks: Array<readonly [string, bigint]> = [];
    for (const [name, entry] of this.view) {
      if (entry.value !== null && entry.partition === partition && name.startsWith(`${key}#`) && parseChunkKey(name)?.key === key) chunks.push([name, entry.offset]);
    }
    const stale = staleChunkKeys(key, saveId, replaced?.partition === partition ? replaced.offset : undefined, chunks);
    if (stale.length === 0) return;
    // The save is already committed: a failed clean-up only leaves chunks for the next save to remove.
    await this.produce(partition, stale.map((name) => ({ key: name, value: null }))).catch((error: unknown) => {
      this.log.warn({ err: error, key, chunks: stale.length }, 'old checkpoint chunks not deleted; the next save tries again');
    });
  }

  /** One produce request (one record batch), acknowledged by every in-sync replica, then in the view. */
  private async produce(partition: number, records: ReadonlyArray<OutRecord | { key: string; value: null }>): Promise<void> {
    let metadata;
    try {
      metadata = await (this.producer as Producer).send({
        topic: this.topic,
        acks: -1,
        messages: records.map((r) => ({ key: r.key, value: r.value, partition, ...('kind' in r ? { headers: { [KIND_HEADER]: r.kind } } : {}) })),
      });
    } catch (error) {
      throw ioError(`cannot write ${records.length === 1 ? (records[0] as OutRecord).key : `${records.length} records`} to ${this.topic}`, error);
    }
    const base = metadata.find((m) => m.partition === partition)?.baseOffset;
    if (base === undefined) throw ioError(`${this.topic} acknowledged no offset for partition ${partition}`);
    records.forEach((r, i) => this.remember(r.key, r.value, 'kind' in r ? r.kind : undefined, partition, BigInt(base) + BigInt(i)));
  }
}
