/**
 * `headroom demo` without a broker: the scenario's events go through the watcher's own ingest into three
 * in-memory partition states (pipeline.ts), and createOutputs (src/stream/outputs.ts) serves them as the
 * watcher does: /metrics, probes, /api and /api/alerts, with the demo's alert rules evaluated on the
 * merged series. No checkpoints and no alert book on disk: each run starts calm.
 */
import type { Logger } from 'pino';
import type { Registry } from 'prom-client';
import type { ThresholdFor } from '../alerts/index.js';
import type { HeadroomConfig } from '../config/index.js';
import type { LoadedReference } from '../reference/index.js';
import { createOutputs, ReferenceIndex } from '../stream/index.js';
import type { Outputs, TransitionListener } from '../stream/index.js';
import type { ScenarioClock } from './clock.js';
import { every } from './clock.js';
import { EMBEDDED_TOPIC, EmbeddedPartitions } from './pipeline.js';
import type { ParcelScenario } from './scenario.js';

/** Wall time between two feeds: often enough that the page moves smoothly at any speed. */
const FEED_EVERY_MS = 100;

export interface EmbeddedDemoOptions {
  readonly config: HeadroomConfig;
  readonly reference: LoadedReference;
  /** Names the reference in /api/series (it is not a file). */
  readonly referenceLabel: string;
  readonly scenario: ParcelScenario;
  readonly clock: ScenarioClock;
  readonly registry: Registry;
  readonly logger: Logger;
  readonly alertListeners: readonly TransitionListener[];
  /** Early-warning decision levels solved before the clock started (thresholds.ts). */
  readonly thresholdFor?: ThresholdFor;
}

export interface EmbeddedDemo {
  /** Listens, then feeds and evaluates on timers; resolves with the base URL. */
  start(): Promise<string>;
  close(): Promise<void>;
  readonly outputs: Outputs;
  readonly partitions: EmbeddedPartitions;
}

export function createEmbeddedDemo(o: EmbeddedDemoOptions): EmbeddedDemo {
  const { config, clock } = o;
  const log = o.logger.child({ component: 'demo' });
  const partitions = new EmbeddedPartitions(config);
  const slot = { model: o.reference.model, path: o.referenceLabel };
  const references = ReferenceIndex.configured([slot]).next([{ ok: true, reference: o.reference }], clock.now()).index;
  const outputs = createOutputs({
    config,
    view: {
      states: () => partitions.all(),
      readiness: () => ({ ready: true, reasons: [] }),
      partitions: () => partitions.all().map((s) => ({ topic: EMBEDDED_TOPIC, partition: s.partition, lagMessages: 0, lastCheckpointMs: null })),
    },
    references: () => references,
    registry: o.registry,
    nowMs: () => clock.now(),
    logger: o.logger,
    alertListeners: o.alertListeners,
    alertDir: null,
    ...(o.thresholdFor === undefined ? {} : { thresholdFor: o.thresholdFor }),
  });
  const stops: (() => void)[] = [];
  let closing: Promise<void> | undefined;

  const feed = (): void => {
    const now = clock.now();
    const rejected = partitions.feed(o.scenario.until(now), now);
    if (rejected > 0) log.error({ rejected }, "the scenario's own events were rejected; this is a bug in the demo");
  };

  async function start(): Promise<string> {
    const url = await outputs.listen();
    feed();
    stops.push(every(FEED_EVERY_MS, feed, (error) => log.error({ err: error }, 'feeding the scenario failed')));
    const alerting = outputs.alerting;
    if (alerting !== undefined) {
      stops.push(every(config.alerts.evaluateEveryMs, async () => void (await alerting.tick()), (error) => log.error({ err: error }, 'alert evaluation failed')));
    }
    return url;
  }

  function close(): Promise<void> {
    closing ??= (async () => {
      for (const stop of stops) stop();
      await outputs.closeServer();
    })();
    return closing;
  }

  return { start, close, outputs, partitions };
}
