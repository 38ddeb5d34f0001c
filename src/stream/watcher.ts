/**
 * `headroom watch`'s consumer loop: a kafkajs consumer group feeding one PartitionState per owned
 * partition, checkpointed with its offset, and an HTTP server over the merged states.
 *
 * Exactly-once, in three moves (DESIGN "Series, windows, state"; src/state/partition-state.ts):
 * - A seek must reach kafkajs before the partition's first fetch, or that fetch starts from the
 *   committed offset; the GROUP_JOIN listener runs before it, so the listener does not wait. With a
 *   store of this instance only (files), every checkpoint of the group is loaded and checked before
 *   run(), and the listener restores each assigned partition from memory and seeks to the stored next
 *   offset. With a shared store (the Kafka topic) a partition may come from another watcher mid-run, so
 *   the listener pauses each newly assigned partition, loads its latest save from the store, and only
 *   then seeks and resumes it (restoreShared). kafkajs applies pending seeks of every assigned
 *   partition, paused or not, at the start of each fetch of its broker (consumerGroup.fetch →
 *   seekOffsets), and fetches a paused partition not at all, so the seek is in place before the first
 *   fetch after the resume. A partition without a checkpoint starts empty at the earliest offset.
 * - Each message of a batch is decoded and applied (or rejected) in offset order; an offset below the
 *   state's next offset is skipped (a fetch made before the seek took effect).
 * - Every checkpoint interval (and at shutdown) each owned state is saved, THEN its next offset is
 *   committed to Kafka, so Kafka tools see the lag and a crash between the two only replays into the
 *   state that was saved. States are snapshotted only between batches, and a partition whose
 *   dead-letter copies are not yet on the dead-letter topic is not checkpointed: a crash then replays
 *   those messages and copies them again (at least once), never loses a copy.
 *
 * Outcome topics (delayed labels): partition p of kafka.outcomeTopics[i] is read into the state of
 * partition p of kafka.topics[i], whose checkpoint then holds both next offsets, and the group assigns
 * partition p of every topic to one member (co-partition.ts). What happens when it does not: outcome-pairs.ts.
 */
import { Kafka, PartitionAssigners } from 'kafkajs';
import type { Admin, Consumer, ConsumerGroupJoinEvent, EachBatchPayload, KafkaConfig as KafkajsConfig, Producer } from 'kafkajs';
import type { Logger } from 'pino';
import type { ThresholdFor } from '../alerts/index.js';
import type { Registry } from 'prom-client';
import { kafkaClientOptions } from '../config/index.js';
import type { HeadroomConfig, TlsMaterial } from '../config/index.js';
import { HeadroomError, isHeadroomError } from '../errors.js';
import type { PartitionInfo, Readiness, WatchedSeriesSource } from '../serve/index.js';
import { PartitionState } from '../state/index.js';
import type { CheckpointStore, PartitionStateJson } from '../state/index.js';
import { coPartitionedAssigner } from './co-partition.js';
import { kafkaLogCreator } from './kafka-log.js';
import { applyOutcomeMessage, planPairs } from './outcome-pairs.js';
import type { TransitionListener } from './alert-runner.js';
import { DeadLetters } from './dead-letters.js';
import { ingestScored } from './ingest.js';
import { createReferenceFiles } from './reference-files.js';
import type { ReloadReport } from './reference-files.js';
import { createOutputs } from './outputs.js';
import { createClusterView } from './cluster-view.js';

export interface WatcherDependencies {
  readonly config: HeadroomConfig;
  /** PEM contents for kafka.tls (readTlsMaterial); empty without TLS. */
  readonly tls?: TlsMaterial;
  /** Makes the kafkajs client; default `new Kafka(options)`. */
  readonly createKafka?: (options: KafkajsConfig) => Kafka;
  readonly store: CheckpointStore;
  readonly logger: Logger;
  /** A registry of the caller's own; the watcher's metric families are added to it. */
  readonly registry: Registry;
  /** Wall clock (ms): event "future" checks, checkpoint times. */
  readonly nowMs: () => number;
  /** How often the high watermarks are fetched for the lag; default the checkpoint interval (at least 1 s). */
  readonly lagIntervalMs?: number;
  /** Told of every alert transition, after the alert state is saved (src/notify makes webhook and log listeners). */
  readonly alertListeners?: readonly TransitionListener[];
  /** How early-warning decision levels are found; default cusumThreshold (src/alerts). */
  readonly thresholdFor?: ThresholdFor;
  /** Told once when the consumer stops for good (a crash kafkajs will not restart from). */
  readonly onFatal?: (error: HeadroomError) => void;
}

export interface Watcher {
  /** Loads references and checkpoints, listens on config.http, joins the group. Rejects (after cleaning up) if any step fails. */
  start(): Promise<void>;
  /** Stop fetching, checkpoint, commit, leave the group, close HTTP and the store. Idempotent; every step runs. */
  close(): Promise<void>;
  /**
   * Reads every configured reference file again and swaps them in at once; a file that fails keeps its
   * previous reference, is logged and counted. Never rejects. See reference-index.ts for the rules.
   */
  reloadReferences(why?: string): Promise<ReloadReport>;
  readonly source: WatchedSeriesSource;
  /** `http://host:port` once listening; undefined before. */
  url(): string | undefined;
}

const EMPTY = new Uint8Array(0);
/** kafkajs sends a heartbeat only when its interval has passed, so asking this often costs little. */
const HEARTBEAT_EVERY = 500;

interface Snapshot {
  readonly key: string;
  readonly state: PartitionState;
  readonly json: PartitionStateJson;
  readonly next: string | null;
  readonly outcomeNext: string | null;
}

function partitionKey(topic: string, partition: number): string {
  return `${topic}\u0000${partition}`;
}

function startError(step: string, cause: unknown): HeadroomError {
  if (isHeadroomError(cause)) return cause;
  return new HeadroomError('HR_ERR_WATCH_START', `${step}: ${cause instanceof Error ? cause.message : String(cause)}`, { cause, context: { step } });
}

export function createWatcher(deps: WatcherDependencies): Watcher {
  const { config, store, nowMs } = deps;
  const group = config.kafka.groupId;
  const log = deps.logger.child({ component: 'stream' });
  const topics = new Set(config.kafka.topics);
  /** Scored topic → its outcome topic, and back (kafka.outcomeTopics[i] pairs with kafka.topics[i]). */
  const outcomeOf = new Map(config.kafka.outcomeTopics.map((t, i) => [config.kafka.topics[i] as string, t]));
  const scoredOf = new Map(config.kafka.outcomeTopics.map((t, i) => [t, config.kafka.topics[i] as string]));
  const allTopics = [...topics, ...scoredOf.keys()];
  const stateOptions = (topic: string, partition: number) => {
    const outcomeTopic = outcomeOf.get(topic);
    return {
      topic,
      partition,
      models: config.models,
      ...(outcomeTopic === undefined ? {} : { outcomes: { topic: outcomeTopic, ttlMs: config.labels.ttlMs, maxPending: config.labels.maxPending } }),
    };
  };
  /** Outcome partition key → the key of the state that reads it; only pairs owned here. */
  const outcomeReaders = new Map<string, string>();
  let unpairedNotes: string[] = [];
  let pausedOutcomes: { topic: string; partitions: number[] }[] = [];
  /** The store is written by other watchers too: restore each newly assigned partition from it (restoreShared). */
  const shared = store.shared === true;
  /** Partitions paused while their state is loaded from a shared store, with the token of that load. */
  const restoring = new Map<string, number>();
  let restoreTokens = 0;
  let lastAssignment: Record<string, number[]> = {};

  const references = createReferenceFiles({ models: config.models, nowMs, log });
  /** Last saved (or loaded) state of each partition of the group: what an assignment restores from. */
  const saved = new Map<string, PartitionStateJson>();
  const owned = new Map<string, PartitionState>();
  const lastCheckpointMs = new Map<string, number>();
  const lows = new Map<string, string>();
  const highs = new Map<string, string>();

  let kafka: Kafka | undefined;
  let admin: Admin | undefined;
  let consumer: Consumer | undefined;
  let producer: Producer | undefined;
  const deadLetterTopic = config.kafka.deadLetterTopic;
  const deadLetters = deadLetterTopic === null ? undefined : new DeadLetters(deadLetterTopic, () => producer, log);
  /** Next offset of the last snapshot handed to the store, per partition. */
  const queuedOffset = new Map<string, string>();
  let inBatch = false;
  let checkpointDue = false;
  let joined = false;
  /** Set at the first assignment: from then on there are states to checkpoint at close. */
  let everJoined = false;
  let stopping = false;
  let fatal: HeadroomError | undefined;
  let restoreFailure: HeadroomError | undefined;
  /** Set while the periodic offset fetch fails: the consumer may not have noticed a broker outage yet. */
  let brokerUnreachable: string | undefined;
  let batchInFlight: Promise<void> = Promise.resolve();
  let checkpointChain: Promise<void> = Promise.resolve();
  const timers: NodeJS.Timeout[] = [];
  let closing: Promise<void> | undefined;

  const readiness = (): Readiness => {
    const reasons: string[] = [];
    if (stopping) reasons.push('shutting down');
    if (fatal !== undefined) reasons.push(fatal.message);
    if (restoreFailure !== undefined) reasons.push(restoreFailure.message);
    if (brokerUnreachable !== undefined) reasons.push(`broker unreachable: ${brokerUnreachable}`);
    if (!joined) reasons.push(`not yet a member of consumer group ${group}`);
    if (restoring.size > 0) reasons.push(`restoring ${[...restoring.keys()].map((k) => k.replace('\u0000', '[')).join('], ')}] from the checkpoint store`);
    reasons.push(...unpairedNotes);
    return { ready: reasons.length === 0, reasons };
  };

  const partitions = (): PartitionInfo[] =>
    [...owned.values()]
      .flatMap((state) => {
        const key = partitionKey(state.topic, state.partition);
        const info = (topic: string, next: string | null): PartitionInfo => {
          const high = highs.get(partitionKey(topic, state.partition));
          const position = next ?? lows.get(partitionKey(topic, state.partition));
          const lag = high === undefined || position === undefined ? null : Math.max(0, Number(BigInt(high) - BigInt(position)));
          return { topic, partition: state.partition, lagMessages: lag, lastCheckpointMs: lastCheckpointMs.get(key) ?? null };
        };
        const outcomeTopic = state.outcomeTopic;
        const read = outcomeTopic !== undefined && outcomeReaders.has(partitionKey(outcomeTopic, state.partition));
        return read ? [info(state.topic, state.nextOffset), info(outcomeTopic, state.outcomeNextOffset)] : [info(state.topic, state.nextOffset)];
      })
      .sort((a, b) => (a.topic < b.topic ? -1 : a.topic > b.topic ? 1 : a.partition - b.partition));

  // With a shared store: every partition of the group, ours live and the others from their last save.
  const clusterView = shared
    ? createClusterView({ store, group, topics, stateOptions, live: () => owned, log: log.child({ view: 'cluster' }), nowMs })
    : undefined;
  /** A simple election of the one exporter of cluster metrics: kafkajs gives each partition to one member. */
  const firstTopic = config.kafka.topics[0] as string;
  const exportsCluster = (): boolean => owned.has(partitionKey(firstTopic, 0));

  // The read view, alerts, metrics and HTTP server, shared with the embedded demo (outputs.ts).
  const outputs = createOutputs({
    config,
    view: { states: () => [...owned.values()], readiness, partitions },
    references: references.current,
    registry: deps.registry,
    nowMs,
    logger: deps.logger,
    alertListeners: deps.alertListeners ?? [],
    alertDir: config.checkpoint.dir,
    ...(deps.thresholdFor === undefined ? {} : { thresholdFor: deps.thresholdFor }),
    ...(clusterView === undefined
      ? {}
      : {
          cluster: {
            view: {
              states: () => clusterView.states(),
              readiness: () => {
                const r = readiness();
                return clusterView.info().refreshedAtMs === null ? { ready: false, reasons: [...r.reasons, 'cluster view not yet read'] } : r;
              },
              partitions,
            },
            exporting: exportsCluster,
          },
        }),
  });
  const { source, alerting } = outputs;

  async function loadCheckpoints(): Promise<void> {
    // A shared store's saves change under us; each assignment loads its partition then (restoreShared).
    if (shared) return;
    for (const { topic, partition } of await store.list(group)) {
      if (!topics.has(topic)) continue;
      const json = await store.load(group, topic, partition);
      if (json === undefined) continue;
      // Restored once here so a bad checkpoint stops the start, not the GROUP_JOIN listener later.
      PartitionState.fromState(json, stateOptions(topic, partition));
      saved.set(partitionKey(topic, partition), json);
    }
    log.info({ group, partitions: saved.size }, 'checkpoints loaded');
  }

  async function refreshOffsets(which: 'low' | 'high'): Promise<void> {
    if (admin === undefined) return;
    for (const topic of allTopics) {
      for (const p of await admin.fetchTopicOffsets(topic)) {
        const key = partitionKey(topic, p.partition);
        if (which === 'low') lows.set(key, p.low);
        highs.set(key, p.high);
      }
    }
  }

  /** Synchronous on purpose: kafkajs applies only seeks made inside this listener, at the next fetch. */
  function onGroupJoin(event: ConsumerGroupJoinEvent): void {
    const c = consumer;
    if (c === undefined) return;
    const assignment = event.payload.memberAssignment;
    const assigned = new Set<string>();
    for (const [topic, list] of Object.entries(assignment)) {
      if (scoredOf.has(topic)) continue; // outcome partitions follow their scored partition, below
      for (const partition of list) {
        const key = partitionKey(topic, partition);
        assigned.add(key);
        let state = owned.get(key);
        if (state === undefined && shared) {
          if (!restoring.has(key)) {
            const token = ++restoreTokens;
            restoring.set(key, token);
            void restoreShared(topic, partition, token);
          }
          // Also when a load is under way: the pause is kept by kafkajs across rebalances, asking again costs nothing.
          c.pause([{ topic, partitions: [partition] }]);
          continue;
        }
        if (state === undefined) {
          const json = saved.get(key);
          try {
            state = json === undefined ? new PartitionState(stateOptions(topic, partition)) : PartitionState.fromState(json, stateOptions(topic, partition));
          } catch (error) {
            failRestore(topic, partition, error);
            continue;
          }
          owned.set(key, state);
        }
        const offset = state.nextOffset ?? lows.get(key);
        if (offset !== undefined) c.seek({ topic, partition, offset });
        log.info({ topic, partition, offset: offset ?? 'earliest', restored: saved.has(key) }, 'partition assigned');
      }
    }
    for (const key of [...restoring.keys()]) {
      if (!assigned.has(key)) restoring.delete(key); // its load, when it ends, is dropped
    }
    for (const key of [...owned.keys()]) {
      if (!assigned.has(key)) {
        const state = owned.get(key);
        owned.delete(key);
        log.info({ topic: state?.topic, partition: state?.partition }, 'partition revoked; progress after its last checkpoint is read again by its next owner');
      }
    }
    lastAssignment = assignment;
    if (scoredOf.size > 0) pairOutcomes(c, assignment);
    joined = true;
    everJoined = true;
  }

  /**
   * Loads a newly assigned partition's latest save from the shared store (the previous owner's, when it
   * moved), then restores it, seeks to its next offset and resumes it, all in one synchronous step so no
   * fetch sees the partition resumed without its seek. Dropped if the partition was revoked meanwhile
   * (another load starts if it comes back). A store that cannot be read is asked again every 2 s; a
   * checkpoint that cannot be restored leaves the partition paused and says so in /readyz.
   */
  async function restoreShared(topic: string, partition: number, token: number): Promise<void> {
    const key = partitionKey(topic, partition);
    const current = (): boolean => restoring.get(key) === token && !stopping;
    let json: PartitionStateJson | undefined;
    for (;;) {
      try {
        json = await store.load(group, topic, partition);
        break;
      } catch (error) {
        if (!current()) return;
        if (isHeadroomError(error) && error.code === 'HR_ERR_CHECKPOINT_IO') {
          log.warn({ err: error, topic, partition }, 'checkpoint store unreadable; partition stays paused, trying again in 2 s');
          await new Promise((resolve) => setTimeout(resolve, 2_000).unref());
          if (!current()) return;
          continue;
        }
        restoring.delete(key);
        failRestore(topic, partition, error);
        return;
      }
    }
    const c = consumer;
    if (!current() || c === undefined) return;
    let state: PartitionState;
    try {
      state = json === undefined ? new PartitionState(stateOptions(topic, partition)) : PartitionState.fromState(json, stateOptions(topic, partition));
    } catch (error) {
      restoring.delete(key);
      failRestore(topic, partition, error);
      return;
    }
    restoring.delete(key);
    owned.set(key, state);
    queuedOffset.delete(key);
    if (json === undefined) saved.delete(key);
    else saved.set(key, json);
    const offset = state.nextOffset ?? lows.get(key);
    if (offset !== undefined) c.seek({ topic, partition, offset });
    c.resume([{ topic, partitions: [partition] }]);
    log.info({ topic, partition, offset: offset ?? 'earliest', restored: json !== undefined }, 'partition assigned');
    if (scoredOf.size > 0) pairOutcomes(c, lastAssignment);
  }

  function failRestore(topic: string, partition: number, error: unknown): void {
    restoreFailure = new HeadroomError('HR_ERR_WATCH_RESTORE', `${topic}[${partition}]: ${error instanceof Error ? error.message : String(error)}`, {
      cause: error,
      context: { topic, partition },
    });
    log.error({ err: restoreFailure, topic, partition }, 'partition not restored; it is not consumed');
  }

  /** Seeks each outcome partition read here to its state's outcome offset; pauses the ones without their scored partition. */
  function pairOutcomes(c: Consumer, assignment: Record<string, number[]>): void {
    if (pausedOutcomes.length > 0) c.resume(pausedOutcomes);
    const plan = planPairs(assignment, scoredOf, outcomeOf, partitionKey);
    outcomeReaders.clear();
    const waiting: { topic: string; partitions: number[] }[] = [];
    for (const { topic, partition, stateKey } of plan.read) {
      const state = owned.get(stateKey);
      if (state === undefined && restoring.has(stateKey)) waiting.push({ topic, partitions: [partition] }); // sought and resumed once its state is in
      if (state === undefined) continue; // not restored: see restoreFailure
      outcomeReaders.set(partitionKey(topic, partition), stateKey);
      const offset = state.outcomeNextOffset ?? lows.get(partitionKey(topic, partition));
      if (offset !== undefined) c.seek({ topic, partition, offset });
      log.info({ topic, partition, offset: offset ?? 'earliest', state: `${state.topic}[${state.partition}]` }, 'outcome partition assigned');
    }
    const byTopic = new Map<string, number[]>();
    for (const { topic, partition } of plan.unpaired) byTopic.set(topic, [...(byTopic.get(topic) ?? []), partition]);
    pausedOutcomes = [...[...byTopic].map(([topic, partitions]) => ({ topic, partitions })), ...waiting];
    if (pausedOutcomes.length > 0) c.pause(pausedOutcomes);
    unpairedNotes = [
      ...plan.unpaired.map((u) => `outcome partition ${u.topic}[${u.partition}] is assigned without scored partition ${scoredOf.get(u.topic)}[${u.partition}]; paused`),
      ...plan.alone.map((a) => `scored partition ${a.topic}[${a.partition}] is owned without outcome partition ${outcomeOf.get(a.topic)}[${a.partition}]; its predictions cannot be labelled here`),
    ];
    for (const note of unpairedNotes) log.warn({ group }, note);
  }

  async function eachBatch(payload: EachBatchPayload): Promise<void> {
    let done!: () => void;
    batchInFlight = new Promise<void>((resolve) => (done = resolve));
    inBatch = true;
    try {
      const { topic, partition } = payload.batch;
      if (scoredOf.has(topic)) {
        const stateKey = outcomeReaders.get(partitionKey(topic, partition));
        await consumeOutcomeBatch(payload, stateKey);
        if (stateKey !== undefined) await deadLetters?.flush(stateKey);
      } else {
        await consumeBatch(payload);
        await deadLetters?.flush(partitionKey(topic, partition));
      }
    } finally {
      inBatch = false;
      if (checkpointDue && !stopping) {
        checkpointDue = false;
        checkpoint().catch((error: unknown) => log.warn({ err: error }, 'checkpoint failed'));
      }
      done();
    }
  }

  async function consumeBatch({ batch, resolveOffset, heartbeat, isRunning, isStale }: EachBatchPayload): Promise<void> {
    const key = partitionKey(batch.topic, batch.partition);
    const state = owned.get(key);
    if (state === undefined) return; // not restored (see restoreFailure) or no longer ours
    const now = nowMs();
    const limits = config.decode;
    const next = state.nextOffset === null ? -1n : BigInt(state.nextOffset);
    let n = 0;
    // Offsets rise within a batch, so once one reaches the state's next offset so do all after it: one
    // BigInt per batch, not per message (and PartitionState refuses an offset below its next one anyway).
    let caughtUp = false;
    // Between two awaits nothing else runs: stopping, isRunning() and isStale() cannot change and nothing
    // reads the resolved offset. So they are asked, and resolveOffset called, once per HEARTBEAT_EVERY
    // messages: per message, kafkajs' isStale() builds a key string and resolveOffset() parses the offset
    // into a Long, which made the watcher about 10% slower end to end (test/bench/watch-e2e.ts). If a
    // message throws, kafkajs fetches again from the last resolved offset and the offset guard above
    // skips what the state already holds, so nothing is counted or dead-lettered twice.
    let live = !stopping && isRunning() && !isStale();
    let unresolved: string | undefined;
    for (const message of batch.messages) {
      if (!live) break;
      const offset = message.offset;
      if (!caughtUp) caughtUp = BigInt(offset) >= next;
      if (caughtUp) {
        // ingest.ts: the same decode → margins → apply the embedded demo runs.
        const rejected = ingestScored(state, message.value ?? EMPTY, offset, limits, Number(message.timestamp), now);
        if (rejected !== undefined) {
          if (rejected.counted) deadLetters?.add(key, batch.topic, batch.partition, message, rejected.reason, rejected.field);
          log.debug({ topic: batch.topic, partition: batch.partition, offset, reason: rejected.reason, field: rejected.field }, 'message rejected');
        }
      }
      unresolved = offset;
      n += 1;
      if (n % HEARTBEAT_EVERY === 0) {
        resolveOffset(offset);
        unresolved = undefined;
        await heartbeat();
        live = !stopping && isRunning() && !isStale();
      }
    }
    if (unresolved !== undefined) resolveOffset(unresolved);
    await heartbeat();
  }

  /** Outcome messages into the state of their pair: the same offset and heartbeat rules as consumeBatch, in the pair's state. */
  async function consumeOutcomeBatch({ batch, resolveOffset, heartbeat, isRunning, isStale }: EachBatchPayload, stateKey: string | undefined): Promise<void> {
    const state = stateKey === undefined ? undefined : owned.get(stateKey);
    if (state === undefined || stateKey === undefined) return; // paused, or no longer ours
    const hooks = {
      limits: config.decode,
      rejected: (message: EachBatchPayload['batch']['messages'][number], reason: string, field: string) =>
        deadLetters?.add(stateKey, batch.topic, batch.partition, message, reason, field),
    };
    let n = 0;
    let unresolved: string | undefined;
    let live = !stopping && isRunning() && !isStale();
    for (const message of batch.messages) {
      if (!live) break;
      applyOutcomeMessage(state, message, hooks);
      unresolved = message.offset;
      n += 1;
      if (n % HEARTBEAT_EVERY === 0) {
        resolveOffset(message.offset);
        unresolved = undefined;
        await heartbeat();
        live = !stopping && isRunning() && !isStale();
      }
    }
    if (unresolved !== undefined) resolveOffset(unresolved);
    await heartbeat();
  }

  /**
   * Snapshots every owned state that moved (synchronously, so between batches: see eachBatch and the
   * timer), then saves them and commits the saved offsets. Saves run one checkpoint at a time.
   */
  function checkpoint(): Promise<void> {
    const snapshots: Snapshot[] = [];
    for (const state of owned.values()) {
      const key = partitionKey(state.topic, state.partition);
      const next = state.nextOffset;
      const outcomeNext = state.outcomeNextOffset;
      if ((next === null && outcomeNext === null) || (deadLetters?.pending(key) ?? 0) > 0) continue;
      // Both offsets: a state that only read outcomes has moved too.
      const mark = `${next ?? ''}/${outcomeNext ?? ''}`;
      if (queuedOffset.get(key) === mark) {
        const s = saved.get(key);
        if (s?.nextOffset === next && (s.outcomes?.nextOffset ?? null) === outcomeNext) lastCheckpointMs.set(key, nowMs()); // nothing new: the checkpoint on disk is current
        continue;
      }
      queuedOffset.set(key, mark);
      snapshots.push({ key, state, json: state.toState() as PartitionStateJson, next, outcomeNext });
    }
    const run = (): Promise<void> => persist(snapshots);
    checkpointChain = checkpointChain.then(run, run);
    return checkpointChain;
  }

  async function persist(snapshots: readonly Snapshot[]): Promise<void> {
    const commits: { topic: string; partition: number; offset: string }[] = [];
    const failures: unknown[] = [];
    await Promise.all(
      snapshots.map(async ({ key, state, json, next, outcomeNext }) => {
        try {
          await store.save(group, state.topic, state.partition, json);
        } catch (error) {
          failures.push(error);
          queuedOffset.delete(key); // try again at the next checkpoint
          log.error({ err: error, topic: state.topic, partition: state.partition }, 'checkpoint failed; the offset is not committed');
          return;
        }
        saved.set(key, json);
        lastCheckpointMs.set(key, nowMs());
        if (next !== null) commits.push({ topic: state.topic, partition: state.partition, offset: next });
        if (outcomeNext !== null && state.outcomeTopic !== undefined) commits.push({ topic: state.outcomeTopic, partition: state.partition, offset: outcomeNext });
      }),
    );
    if (commits.length > 0 && consumer !== undefined) {
      try {
        await consumer.commitOffsets(commits);
      } catch (error) {
        // The checkpoint is what restores; a failed commit only leaves Kafka's view of the lag behind.
        log.warn({ err: error, partitions: commits.length }, 'offset commit failed after checkpoint');
      }
    }
    if (failures.length > 0) throw failures[0];
  }

  /** Runs `task` every `ms`, skipping a tick while the last run is still going (kafkajs retries can take tens of seconds in an outage). */
  function every(ms: number, task: () => Promise<void>, what: string): void {
    let running = false;
    const timer = setInterval(() => {
      if (running) return;
      running = true;
      task()
        .catch((error: unknown) => log.warn({ err: error }, `${what} failed`))
        .finally(() => (running = false));
    }, ms);
    timer.unref();
    timers.push(timer);
  }

  async function start(): Promise<void> {
    if (closing !== undefined) throw new HeadroomError('HR_ERR_WATCH_START', 'close() was called; make a new watcher');
    try {
      await references.load().catch((e: unknown) => Promise.reject(startError('loading references', e)));
      if (config.referenceReload.watchFiles) references.watchFiles(config.referenceReload.debounceMs);
      await loadCheckpoints().catch((e: unknown) => Promise.reject(startError('loading checkpoints', e)));
      await alerting?.load().catch((e: unknown) => Promise.reject(startError('loading the alert state', e)));
      await outputs.listen().catch((e: unknown) => Promise.reject(startError(`listening on ${config.http.host}:${config.http.port}`, e)));
      const options: KafkajsConfig = { ...kafkaClientOptions(config, deps.tls ?? {}), logCreator: kafkaLogCreator(deps.logger.child({ component: 'kafkajs' })) };
      kafka = (deps.createKafka ?? ((o: KafkajsConfig) => new Kafka(o)))(options);
      const a = kafka.admin();
      admin = a;
      await a.connect().catch((e: unknown) => Promise.reject(startError(`connecting to ${config.kafka.brokers.join(',')}`, e)));
      await refreshOffsets('low').catch((e: unknown) => Promise.reject(startError(`reading offsets of ${[...topics].join(', ')}`, e)));
      if (deadLetterTopic !== null) {
        const p = kafka.producer({ allowAutoTopicCreation: false });
        producer = p;
        await p.connect().catch((e: unknown) => Promise.reject(startError(`connecting the dead-letter producer for ${deadLetterTopic}`, e)));
      }
      const c = kafka.consumer({
        groupId: group,
        sessionTimeout: config.kafka.sessionTimeoutMs,
        heartbeatInterval: config.kafka.heartbeatIntervalMs,
        // kafkajs sleeps a whole maxWaitTime when every partition it would fetch is paused (consumerGroup.fetch),
        // so a partition restored from a shared store waits that long to be read: 1 s there, not the default 5.
        ...(shared ? { maxWaitTimeInMs: 1_000 } : {}),
        // Only with outcome topics: the default deals partition p of two topics to different members (co-partition.ts).
        ...(scoredOf.size > 0 ? { partitionAssigners: [coPartitionedAssigner, PartitionAssigners.roundRobin] } : {}),
      });
      consumer = c;
      c.on(c.events.GROUP_JOIN, onGroupJoin);
      c.on(c.events.CRASH, (event) => {
        log.error({ err: event.payload.error, restart: event.payload.restart }, 'consumer crashed');
        joined = false; // not ready until kafkajs has rejoined (the next GROUP_JOIN) or for good
        if (!event.payload.restart && !stopping) {
          fatal = new HeadroomError('HR_ERR_WATCH_CONSUMER_CRASHED', event.payload.error.message, { cause: event.payload.error });
          deps.onFatal?.(fatal);
        }
      });
      await c.connect().catch((e: unknown) => Promise.reject(startError(`connecting the consumer of group ${group}`, e)));
      await c.subscribe({ topics: allTopics, fromBeginning: true });
      await c.run({ autoCommit: false, eachBatchAutoResolve: false, eachBatch });
      every(
        Math.max(config.checkpoint.intervalMs, 100),
        () => {
          if (!inBatch) return checkpoint();
          checkpointDue = true; // taken when the batch ends, so no snapshot holds a half-sent batch
          return Promise.resolve();
        },
        'checkpoint',
      );
      every(
        deps.lagIntervalMs ?? Math.max(config.checkpoint.intervalMs, 1_000),
        () =>
          refreshOffsets('high').then(
            () => {
              if (brokerUnreachable !== undefined) log.info('broker reachable again');
              brokerUnreachable = undefined;
            },
            (error: unknown) => {
              brokerUnreachable = error instanceof Error ? error.message : String(error);
              throw error;
            },
          ),
        'lag refresh',
      );
      if (clusterView !== undefined) every(Math.max(config.checkpoint.intervalMs, 1_000), () => clusterView.refresh(), 'cluster view refresh');
      if (alerting !== undefined) every(config.alerts.evaluateEveryMs, () => alerting.tick().then(() => undefined), 'alert evaluation');
      log.info({ group, topics: [...topics] }, 'consumer running');
    } catch (error) {
      await close().catch(() => undefined);
      throw startError('starting', error);
    }
  }

  function close(): Promise<void> {
    closing ??= (async () => {
      stopping = true;
      const errors: unknown[] = [];
      const step = async (name: string, work: () => Promise<unknown> | unknown): Promise<void> => {
        try {
          await work();
        } catch (error) {
          errors.push(error);
          log.error({ err: error, step: name }, 'shutdown step failed');
        }
      };
      for (const timer of timers) clearInterval(timer);
      references.close();
      const c = consumer;
      await step('stop fetching', () => {
        if (c !== undefined && joined) c.pause(allTopics.map((topic) => ({ topic })));
        return batchInFlight;
      });
      await step('send dead-letter copies', () => deadLetters?.flushAll());
      await step('checkpoint and commit', () => (everJoined ? checkpoint() : undefined));
      await step('leave the group', () => c?.disconnect());
      await step('disconnect the dead-letter producer', () => producer?.disconnect());
      await step('disconnect admin', () => admin?.disconnect());
      await step('close HTTP', () => outputs.closeServer());
      await step('close checkpoint store', () => store.close());
      log.info({ errors: errors.length }, 'watcher closed');
      if (errors.length > 0) {
        throw new HeadroomError('HR_ERR_WATCH_SHUTDOWN', `${errors.length} step(s) failed, first: ${errors[0] instanceof Error ? errors[0].message : String(errors[0])}`, { cause: errors[0] });
      }
    })();
    return closing;
  }

  return { start, close, reloadReferences: (why) => references.reload(why), source, url: outputs.url };
}
