/**
 * What a live run puts around its partition states, whatever feeds them: the merged read view
 * (source.ts), the alert runner over it, the scrape-time metrics and the HTTP server (/metrics, probes,
 * /api, /api/alerts). `headroom watch` (Kafka) and the embedded `headroom demo` both build it here, so
 * the two serve the same figures the same way; each keeps its own loop and its own timers.
 */
import { createServer } from 'node:http';
import type { Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import type { Logger } from 'pino';
import type { Registry } from 'prom-client';
import type { ThresholdFor } from '../alerts/index.js';
import type { HeadroomConfig } from '../config/index.js';
import { createApp, createClusterMetrics, createMetrics } from '../serve/index.js';
import type { WatchedSeriesSource } from '../serve/index.js';
import { createAlertRunner } from './alert-runner.js';
import type { AlertRunner, TransitionListener } from './alert-runner.js';
import type { ReferenceIndex } from './reference-index.js';
import { createSeriesSource } from './source.js';
import type { SourceView } from './source.js';

export interface OutputsOptions {
  readonly config: HeadroomConfig;
  readonly view: SourceView;
  /** Asked once per answer (see createSeriesSource). */
  readonly references: () => ReferenceIndex;
  readonly registry: Registry;
  readonly nowMs: () => number;
  readonly logger: Logger;
  readonly alertListeners?: readonly TransitionListener[];
  /** Where the alert book is saved (`<dir>/<group>.alerts.json`); null: in memory only. */
  readonly alertDir: string | null;
  /** Passed to the alert runner (see AlertRunnerOptions.thresholdFor). */
  readonly thresholdFor?: ThresholdFor;
  /** Several watchers: the whole group's states (/api/cluster, headroom_cluster_ metrics while `exporting`). */
  readonly cluster?: { readonly view: SourceView; readonly exporting: () => boolean };
}

export interface Outputs {
  readonly source: WatchedSeriesSource;
  /** Undefined without alert rules. */
  readonly alerting: AlertRunner | undefined;
  /** Listens on config.http; resolves with `http://host:port`. */
  listen(): Promise<string>;
  /** Closes the server and its open connections; idempotent. */
  closeServer(): Promise<void>;
  /** `http://host:port` once listening. */
  url(): string | undefined;
}

export function createOutputs(options: OutputsOptions): Outputs {
  const { config, registry, nowMs } = options;
  const httpLog = options.logger.child({ component: 'http' });
  const series = createSeriesSource(options.view, options.references);
  const alerting =
    config.alerts.rules.length === 0
      ? undefined
      : createAlertRunner({
          rules: config.alerts.rules,
          views: config.windows,
          series: () => series.series(),
          dir: options.alertDir,
          group: config.kafka.groupId,
          logger: options.logger.child({ component: 'alerts' }),
          listeners: options.alertListeners ?? [],
          ...(options.thresholdFor === undefined ? {} : { thresholdFor: options.thresholdFor }),
        });
  const source: WatchedSeriesSource = alerting === undefined ? series : { ...series, alerts: () => alerting.report() };
  createMetrics({ registry, source, views: config.windows, nowMs });
  const cluster = options.cluster === undefined ? undefined : createSeriesSource(options.cluster.view, options.references);
  if (cluster !== undefined && options.cluster !== undefined) {
    const view = options.cluster.view;
    createClusterMetrics({ registry, source: cluster, views: config.windows, exporting: options.cluster.exporting, partitions: () => view.states().length });
  }
  let server: Server | undefined;
  let address: string | undefined;

  async function listen(): Promise<string> {
    const app = createApp({
      registry,
      source,
      views: config.windows,
      nowMs,
      onError: (error) => httpLog.error({ err: error }, 'request failed'),
      ...(cluster === undefined ? {} : { cluster }),
    });
    const s = createServer(app);
    server = s;
    await new Promise<void>((resolve, reject) => {
      s.once('error', reject);
      s.listen(config.http.port, config.http.host, () => {
        s.off('error', reject);
        resolve();
      });
    });
    const { port } = s.address() as AddressInfo;
    const host = config.http.host.includes(':') ? `[${config.http.host}]` : config.http.host;
    address = `http://${host}:${port}`;
    httpLog.info({ url: address }, `listening on ${address}`);
    return address;
  }

  function closeServer(): Promise<void> {
    const s = server;
    if (s === undefined || !s.listening) return Promise.resolve();
    return new Promise<void>((resolve, reject) => {
      s.close((error) => (error === undefined ? resolve() : reject(error)));
      s.closeAllConnections();
    });
  }

  return { source, alerting, listen, closeServer, url: () => address };
}
