/**
 * `headroom demo --kafka BROKERS`: the scenario produced to a topic (three partitions, one per line, in
 * scenario time), and, unless --produce-only, the real watcher (createWatcher) consuming it with the
 * demo's configuration, its checkpoints and alert book in a temporary directory. The watcher's clock is
 * the scenario clock, as the embedded demo's is.
 */
import { Kafka, logLevel } from 'kafkajs';
import type { Admin, Producer } from 'kafkajs';
import type { Logger } from 'pino';
import type { Registry } from 'prom-client';
import type { ThresholdFor } from '../alerts/index.js';
import type { HeadroomConfig } from '../config/index.js';
import { HeadroomError, isHeadroomError } from '../errors.js';
import { FileCheckpointStore } from '../state/index.js';
import { createWatcher, kafkaLogCreator } from '../stream/index.js';
import type { TransitionListener, Watcher } from '../stream/index.js';
import type { ScenarioClock } from './clock.js';
import { every } from './clock.js';
import { PARCEL_LINES } from './parcels.js';
import type { ParcelScenario } from './scenario.js';

const PRODUCE_EVERY_MS = 100;

export interface KafkaDemoOptions {
  readonly brokers: readonly string[];
  readonly topic: string;
  readonly scenario: ParcelScenario;
  readonly clock: ScenarioClock;
  readonly logger: Logger;
  /** The watcher's configuration (its brokers and topic the same as above); null: produce only. */
  readonly watch: { readonly config: HeadroomConfig; readonly registry: Registry; readonly alertListeners: readonly TransitionListener[]; readonly thresholdFor?: ThresholdFor } | null;
}

export interface KafkaDemo {
  /** Creates the topic, starts producing and (unless produce-only) the watcher; resolves with the watcher's URL. */
  start(): Promise<string | undefined>;
  close(): Promise<void>;
  /** Events sent so far. */
  produced(): number;
}

function kafkaError(step: string, cause: unknown): HeadroomError {
  if (isHeadroomError(cause)) return cause;
  return new HeadroomError('HR_ERR_DEMO_KAFKA', `${step}: ${cause instanceof Error ? cause.message : String(cause)}`, { cause, context: { step } });
}

export function createKafkaDemo(o: KafkaDemoOptions): KafkaDemo {
  const log = o.logger.child({ component: 'demo' });
  const kafka = new Kafka({ clientId: 'headroom-demo', brokers: [...o.brokers], logLevel: logLevel.WARN, logCreator: kafkaLogCreator(o.logger.child({ component: 'kafkajs' })) });
  let admin: Admin | undefined;
  let producer: Producer | undefined;
  let watcher: Watcher | undefined;
  let stop: (() => void) | undefined;
  let sent = 0;
  let closing: Promise<void> | undefined;

  async function produce(): Promise<void> {
    const p = producer;
    if (p === undefined) return;
    const events = o.scenario.until(o.clock.now());
    if (events.length === 0) return;
    await p.send({
      topic: o.topic,
      messages: events.map((e) => ({ key: e.line, partition: Math.max(0, PARCEL_LINES.indexOf(e.line)), value: JSON.stringify(e.wire), timestamp: String(e.timeMs) })),
    });
    sent += events.length;
  }

  async function start(): Promise<string | undefined> {
    try {
      admin = kafka.admin();
      await admin.connect().catch((e: unknown) => Promise.reject(kafkaError(`connecting to ${o.brokers.join(',')}`, e)));
      // false when it exists already: then its partitions are used as they are.
      const created = await admin
        .createTopics({ topics: [{ topic: o.topic, numPartitions: PARCEL_LINES.length }], waitForLeaders: true })
        .catch((e: unknown) => Promise.reject(kafkaError(`creating topic ${o.topic}`, e)));
      log.info({ topic: o.topic, created }, created ? 'topic created' : 'topic exists; producing to it as it is');
      producer = kafka.producer({ allowAutoTopicCreation: false });
      await producer.connect().catch((e: unknown) => Promise.reject(kafkaError('connecting the producer', e)));
      await produce().catch((e: unknown) => Promise.reject(kafkaError(`producing to ${o.topic}`, e)));
      stop = every(PRODUCE_EVERY_MS, produce, (error) => log.warn({ err: error }, 'producing failed; trying again'));
      if (o.watch === null) return undefined;
      const w = createWatcher({
        config: o.watch.config,
        store: new FileCheckpointStore({ dir: o.watch.config.checkpoint.dir }),
        logger: o.logger,
        registry: o.watch.registry,
        nowMs: () => o.clock.now(),
        alertListeners: o.watch.alertListeners,
        ...(o.watch.thresholdFor === undefined ? {} : { thresholdFor: o.watch.thresholdFor }),
      });
      watcher = w;
      await w.start();
      return w.url();
    } catch (error) {
      await close().catch(() => undefined);
      throw error;
    }
  }

  function close(): Promise<void> {
    closing ??= (async () => {
      stop?.();
      const errors: unknown[] = [];
      for (const step of [() => watcher?.close(), () => producer?.disconnect(), () => admin?.disconnect()]) {
        try {
          await step();
        } catch (error) {
          errors.push(error);
        }
      }
      if (errors.length > 0) throw errors[0];
    })();
    return closing;
  }

  return { start, close, produced: () => sent };
}
