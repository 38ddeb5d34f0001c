/**
 * `headroom watch --config FILE`: the service. Reads the configuration (environment overrides applied),
 * starts the watcher and runs until SIGTERM or SIGINT, then shuts down in order within a bounded time.
 * SIGHUP reloads the reference files and nothing else: the service keeps running.
 */
import type { Command } from 'commander';
import { pino } from 'pino';
import { Registry } from 'prom-client';
import { describeConfig, ENV_VARIABLES, loadConfig, readTlsMaterial } from '../config/index.js';
import type { Env } from '../config/index.js';
import { HeadroomError } from '../errors.js';
import { combineNotifiers, createLogNotifier, createWebhookNotifier, noticeOf, registerNotificationMetrics, webhookOptionsFrom } from '../notify/index.js';
import type { Notifier } from '../notify/index.js';
import { createWatcher } from '../stream/index.js';
import { checkpointStoreFor } from './checkpoint-store.js';
import { stopSignals } from './signals.js';

/** A shutdown that takes longer than this exits 1 instead of hanging a deploy. */
export const SHUTDOWN_TIMEOUT_MS = 15_000;
/** How long shutdown waits for alert notices still queued for the webhook. */
const NOTIFY_FLUSH_MS = 5_000;

const HELP = `
Environment (each overrides the file):
  ${ENV_VARIABLES.brokers}        brokers, comma-separated (kafka.brokers)
  ${ENV_VARIABLES.saslUsername}  SASL user (kafka.sasl.username)
  ${ENV_VARIABLES.saslPassword}  SASL password; only from here, never in the file
  ${ENV_VARIABLES.httpPort}            port of /metrics, /healthz, /readyz and /api (http.port)
  ${ENV_VARIABLES.alertWebhookToken}  bearer token for alerts.webhook; only from here, never in the file
  LOG_LEVEL                     pino level: fatal, error, warn, info (default), debug, trace

State is kept per Kafka partition under checkpoint.dir (or, with checkpoint.store: kafka, on the compacted
topic checkpoint.topic) and written with its next offset; on start the consumer resumes from there, so counts are exact across restarts. SIGTERM or SIGINT: stop fetching,
checkpoint, commit, leave the group, exit 0 (1 when shutdown fails or takes over ${SHUTDOWN_TIMEOUT_MS / 1000} s).

SIGHUP re-reads every reference file (as does a change to one, unless referenceReload.watchFiles is
false). A file that cannot be read or is invalid keeps the reference loaded before; the error is logged
and counted in headroom_reference_reload_errors_total. The configuration itself is read at start only.

Example:
  $ HEADROOM_KAFKA_BROKERS=kafka-1:9092,kafka-2:9092 headroom watch --config examples/watch.yaml
`;

export interface WatchIo {
  readonly env: Env;
  /** Resolves when the service should stop (a signal); passed in so tests need no real signals. */
  readonly stopSignal: () => Promise<string>;
  /** Calls `reload` on each reload request (SIGHUP); returns the unsubscribe. Absent: no reload requests. */
  readonly onReloadSignal?: (reload: () => void) => () => void;
}

export async function runWatch(configPath: string, io: WatchIo): Promise<void> {
  const logger = pino({ level: io.env.LOG_LEVEL ?? 'info', base: { service: 'headroom' } });
  const { config, warnings } = await loadConfig(configPath, io.env);
  for (const warning of warnings) logger.warn(warning);
  logger.info({ config: describeConfig(config) }, 'configuration');
  const tls = await readTlsMaterial(config);
  const store = checkpointStoreFor(config, tls, logger);
  const registry = new Registry();
  const notifiers: Notifier[] = [createLogNotifier(logger.child({ component: 'alerts' }))];
  if (config.alerts.webhook !== null) notifiers.push(createWebhookNotifier(webhookOptionsFrom(config.alerts.webhook, io.env, logger.child({ component: 'webhook' }))));
  const notifier = combineNotifiers(notifiers);
  if (config.alerts.rules.length > 0) registerNotificationMetrics(registry, notifiers);
  let fatal: HeadroomError | undefined;
  let wakeOnFatal: (() => void) | undefined;
  const fatalStop = new Promise<string>((resolve) => (wakeOnFatal = () => resolve('consumer crash')));
  const watcher = createWatcher({
    config,
    tls,
    store,
    logger,
    registry,
    nowMs: () => Date.now(),
    alertListeners: [(transition, rule, reading) => notifier.notify(noticeOf(transition, rule, { reading, linkBase: config.alerts.linkBase }))],
    onFatal: (error) => {
      fatal = error;
      wakeOnFatal?.();
    },
  });
  // Subscribed before start and kept to the end: unhandled, a SIGHUP would end the process (Node's default),
  // and a SIGTERM during start would kill it without a checkpoint; now it shuts down as soon as start ends.
  const stopRequested = io.stopSignal();
  let started = false;
  const unsubscribe = io.onReloadSignal?.(() => {
    if (!started) {
      logger.info('SIGHUP while starting: the references being loaded are the files as they are now');
      return;
    }
    void watcher.reloadReferences('SIGHUP');
  });
  await watcher.start().catch((error: unknown) => {
    unsubscribe?.();
    throw error;
  });
  started = true;
  const why = await Promise.race([stopRequested, fatalStop]);
  logger.info({ why }, 'shutting down');
  let timer: NodeJS.Timeout | undefined;
  const timeout = new Promise<never>((_, reject) => {
    timer = setTimeout(
      () => reject(new HeadroomError('HR_ERR_WATCH_SHUTDOWN', `not finished after ${SHUTDOWN_TIMEOUT_MS / 1000} s; exiting anyway`)),
      SHUTDOWN_TIMEOUT_MS,
    );
  });
  try {
    await Promise.race([watcher.close(), timeout]);
    // The last transitions may still be on their way to the webhook; what is not sent by then is logged as dropped.
    if (!(await notifier.flush(NOTIFY_FLUSH_MS))) logger.warn({ pending: notifier.counts().pending }, 'alert notices still unsent at shutdown');
    await notifier.close();
  } finally {
    clearTimeout(timer);
    unsubscribe?.();
  }
  if (fatal !== undefined) throw fatal;
}

function hangups(reload: () => void): () => void {
  const on = (): void => reload();
  process.on('SIGHUP', on);
  return () => void process.off('SIGHUP', on);
}

export function registerWatchCommand(program: Command): void {
  program
    .command('watch')
    .summary('the service: consume scored events from Kafka, keep margin windows, serve /metrics and the API')
    .description(
      'Consume scored events from Kafka with a consumer group, keep the live margin distribution of every model, ' +
        'version and segment per partition (checkpointed with its offset), compare it with the reference files, ' +
        'and serve Prometheus metrics, health probes and a read-only JSON API.',
    )
    .requiredOption('-c, --config <file>', 'YAML configuration (see examples/watch.yaml); paths in it are relative to the file')
    .addHelpText('after', HELP)
    .action(async (raw: { config: string }) => {
      try {
        await runWatch(raw.config, { env: process.env, stopSignal: stopSignals, onReloadSignal: hangups });
      } finally {
        // Anything a failed step left open (a socket, a timer) must not keep the process past shutdown.
        setTimeout(() => process.exit(process.exitCode ?? 1), 2_000).unref();
      }
    });
}
