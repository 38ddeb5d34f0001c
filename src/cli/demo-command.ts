/**
 * `headroom demo`: the invented parcel-inspection scenario (src/demo) run through the watcher's own core,
 * with its HTTP server, in one process and no broker; or, with --kafka, produced to a topic and watched by
 * the real watcher. Prints where to look and what to watch for, then each alert transition as it happens.
 */
import { mkdtempSync, rmSync, writeFileSync, mkdirSync } from 'node:fs';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { Command } from 'commander';
import { pino } from 'pino';
import { Registry } from 'prom-client';
import { DEFAULT_HTTP_PORT, parseDuration } from '../config/index.js';
import { HeadroomError } from '../errors.js';
import type { TransitionListener } from '../stream/index.js';
import {
  clockText,
  createEmbeddedDemo,
  createKafkaDemo,
  DEMO_GROUP,
  demoConfig,
  demoReference,
  demoReferenceText,
  EXPECTED_ALERTS,
  ParcelScenario,
  PARCEL_MODEL,
  PARCEL_VERSION,
  REFERENCE_EVENTS,
  scenarioClock,
  SCENARIO_DEFAULTS,
  solvedThresholds,
} from '../demo/index.js';
import { referenceFileName } from '../reference/index.js';
import { stopSignals } from './signals.js';

/** Placeholder brokers for the embedded demo's configuration: it never connects to them. */
const NO_BROKER = '127.0.0.1:9';
const SHUTDOWN_TIMEOUT_MS = 15_000;

const HELP = `
What you see: three sorting lines feed parcel photos to the invented classifier parcel-damage. Line 3's
camera is worn (the model is less sure there) and from --drift-at it fogs up over two minutes, so line 3's
share of low-margin predictions climbs from about 0.3 to about 0.7 while lines 1 and 2 stay calm. The demo
compares each line with a reference built at start from a held-out calm day of the same scenario, and
runs two alert rules per line: line-early-warning (a CUSUM on the share below 0.25, watching for a
doubling) and line-low-margin-rise (the 5-minute share's Wilson lower bound 50 % above the reference's,
held for a minute). At the defaults the early warning fires on line 3 about a minute or two after the
drift starts and the low-margin rise about four to five minutes after; lines 1 and 2 stay calm.

Where: the URLs printed at start. /metrics is Prometheus text; /api/series lists the series, and
/api/series/parcel-damage/2026.11.3/line=3 shows one; /api/alerts shows every alert and its phase.

Time: the demo's clock is scenario time. --speed 60 runs a scenario minute every wall second (event
times run ahead of the wall clock accordingly); --duration is scenario time too.

Kafka: --kafka BROKERS creates --topic (3 partitions, one per line), produces the scenario to it in
scenario time and runs the real watcher on it (checkpoints in a temporary directory, removed at exit).
--produce-only skips the watcher, for a watcher of your own (docker-compose.yml runs it this way, with
examples/compose/watch.yaml); keep --speed 1 then, as that watcher's clock is the wall clock.

Examples:
  $ headroom demo
  $ headroom demo --speed 30 --duration 15m
  $ headroom demo --kafka 127.0.0.1:9092
  $ headroom demo --kafka kafka:9092 --topic parcel-scores --produce-only
  $ headroom demo --write-reference references/     # the scenario's reference file, then exit
`;

interface DemoFlags {
  speed: string;
  port?: string;
  host: string;
  seed: string;
  rate: string;
  driftAt: string;
  duration?: string;
  kafka?: string;
  topic?: string;
  produceOnly?: boolean;
  writeReference?: string;
}

function usage(option: string, detail: string, value: unknown): HeadroomError {
  return new HeadroomError('HR_ERR_CLI_USAGE', `${option}: ${detail}`, { context: { option, value } });
}

function positiveNumber(option: string, text: string): number {
  const n = Number(text);
  if (!(text.trim() !== '' && Number.isFinite(n) && n > 0)) throw usage(option, `must be a number above 0, got ${JSON.stringify(text)}`, text);
  return n;
}

function durationFlag(option: string, text: string, allowZero = false): number {
  if (allowZero && /^0+(ms|s|m|h)?$/.test(text.trim())) return 0;
  const d = parseDuration(text);
  if (!d.ok) throw usage(option, `${d.detail} (e.g. 90s, 3m, 1h)`, text);
  return d.ms;
}

/** `preferred` when it is free on `host`, else a port the system picks. */
async function freePort(host: string, preferred: number): Promise<number> {
  return new Promise((resolve) => {
    const probe = createServer();
    probe.once('error', () => resolve(0));
    probe.listen(preferred, host, () => probe.close(() => resolve(preferred)));
  });
}

const out = (line: string): void => void process.stdout.write(`${line}\n`);

export async function runDemo(flags: DemoFlags): Promise<void> {
  const seed = Number(flags.seed);
  if (!(Number.isSafeInteger(seed) && seed >= 0)) throw usage('--seed', `must be a whole number >= 0, got ${JSON.stringify(flags.seed)}`, flags.seed);
  if (flags.writeReference !== undefined) {
    mkdirSync(flags.writeReference, { recursive: true });
    const path = join(flags.writeReference, referenceFileName(PARCEL_MODEL, PARCEL_VERSION));
    writeFileSync(path, demoReferenceText(seed));
    out(path);
    return;
  }
  const speed = positiveNumber('--speed', flags.speed);
  const rate = positiveNumber('--rate', flags.rate);
  const driftAfterMs = durationFlag('--drift-at', flags.driftAt, true);
  const durationMs = flags.duration === undefined ? undefined : durationFlag('--duration', flags.duration);
  if (flags.produceOnly === true && flags.kafka === undefined) throw usage('--produce-only', 'needs --kafka BROKERS', true);
  if (flags.topic !== undefined && flags.kafka === undefined) throw usage('--topic', 'needs --kafka BROKERS', flags.topic);
  const brokers = flags.kafka?.split(',').map((b) => b.trim()).filter((b) => b !== '');
  if (brokers !== undefined && brokers.length === 0) throw usage('--kafka', 'must list at least one broker (host:port)', flags.kafka);
  const watching = flags.produceOnly !== true;
  const port = flags.port === undefined ? await freePort(flags.host, DEFAULT_HTTP_PORT) : Number(flags.port);
  if (!(Number.isSafeInteger(port) && port >= 0 && port <= 65_535)) throw usage('--port', `must be a whole number in [0, 65535], got ${JSON.stringify(flags.port)}`, flags.port);

  const logger = pino({ level: process.env.LOG_LEVEL ?? 'warn', base: { service: 'headroom-demo' } }, process.stderr);
  out(`headroom demo: preparing the reference (${REFERENCE_EVENTS} parcels of a calm day) and the alert levels...`);
  const reference = demoReference(seed);
  const runId = new Date().toISOString().replace(/[-:.]/g, '').slice(0, 15);
  const topic = flags.topic ?? `headroom-demo-${runId}`;
  const work = brokers !== undefined && watching ? mkdtempSync(join(tmpdir(), 'headroom-demo-')) : undefined;
  const referencePath = work === undefined ? null : join(work, referenceFileName(PARCEL_MODEL, PARCEL_VERSION));
  const config = demoConfig({
    brokers: brokers ?? [NO_BROKER],
    topic,
    groupId: `${DEMO_GROUP}-${runId}`,
    host: flags.host,
    port,
    checkpointDir: work === undefined ? join(tmpdir(), 'headroom-demo-unused') : join(work, 'state'),
    referencePath,
    speed,
  });
  const thresholdFor = solvedThresholds(config, reference);
  // Started only now, so the preparation above takes no scenario time.
  const clock = scenarioClock(speed);
  const scenario = new ParcelScenario({ seed, eventsPerSecond: rate, startMs: clock.startMs, driftAfterMs, driftRampMs: SCENARIO_DEFAULTS.driftRampMs });
  const at = (scenarioMs: number): string => (speed === 1 ? clockText(scenarioMs) : `${clockText(scenarioMs)} (${clockText(clock.wallMsFor(scenarioMs))} wall time)`);
  const fired: string[] = [];
  const printTransitions: TransitionListener = (t) => {
    const phase = `${t.from} → ${t.to}`;
    const value = t.value === null ? '' : ` (${t.value.toFixed(3)} against ${t.threshold === null ? '-' : t.threshold.toFixed(3)})`;
    if (t.to === 'firing') fired.push(`${t.rule} on ${t.series.segment} at ${clockText(t.at - clock.startMs)}`);
    out(`[${clockText(t.at - clock.startMs)}] ${t.to === 'firing' ? 'ALERT ' : ''}${t.series.segment} ${t.rule}: ${phase}${value}`);
  };

  const registry = new Registry();
  let close: () => Promise<void>;
  let url: string | undefined;
  let produced: () => number;
  if (brokers === undefined) {
    const demo = createEmbeddedDemo({ config, reference, referenceLabel: `(built at start from the scenario's held-out calm day, seed ${seed})`, scenario, clock, registry, logger, alertListeners: [printTransitions], thresholdFor });
    url = await demo.start();
    close = () => demo.close();
    produced = () => scenario.produced;
  } else {
    if (work !== undefined && referencePath !== null) {
      writeFileSync(referencePath, demoReferenceText(seed));
    }
    const demo = createKafkaDemo({ brokers, topic, scenario, clock, logger, watch: watching ? { config, registry, alertListeners: [printTransitions], thresholdFor } : null });
    try {
      url = await demo.start();
    } catch (error) {
      if (work !== undefined) rmSync(work, { recursive: true, force: true });
      throw error;
    }
    close = async () => {
      try {
        await demo.close();
      } finally {
        if (work !== undefined) rmSync(work, { recursive: true, force: true });
      }
    };
    produced = () => demo.produced();
  }

  out(`headroom demo: ${PARCEL_MODEL} ${PARCEL_VERSION} on sorting lines 1-3, ${rate} parcels/s, seed ${seed}, speed ${speed}x`);
  if (brokers !== undefined) out(`  kafka:   producing to ${topic} on ${brokers.join(',')}${watching ? ', watched by headroom watch' : ' (produce only)'}`);
  if (url !== undefined) {
    out(`  page:    ${url}/`);
    out(`  metrics: ${url}/metrics`);
    out(`  series:  ${url}/api/series`);
    out(`  alerts:  ${url}/api/alerts`);
  }
  out(`line 3's camera starts to drift at ${at(driftAfterMs)}; expect an alert on line 3 by about ${at(driftAfterMs + EXPECTED_ALERTS.earlyWarningWithinMs)} (line-early-warning), line-low-margin-rise by about ${at(driftAfterMs + EXPECTED_ALERTS.shareRiseWithinMs)}`);
  if (rate < SCENARIO_DEFAULTS.eventsPerSecond) out(`(fewer parcels a second than the default ${SCENARIO_DEFAULTS.eventsPerSecond}: the alerts take longer)`);
  if (durationMs !== undefined) out(`stopping after ${at(durationMs)}`);

  const stopped = new Promise<string>((resolve) => {
    void stopSignals().then(resolve);
    if (durationMs !== undefined) setTimeout(() => resolve('duration'), clock.wallMsFor(durationMs)).unref();
  });
  const why = await stopped;
  let timer: NodeJS.Timeout | undefined;
  const timeout = new Promise<never>((_, reject) => {
    timer = setTimeout(() => reject(new HeadroomError('HR_ERR_WATCH_SHUTDOWN', `not finished after ${SHUTDOWN_TIMEOUT_MS / 1000} s; exiting anyway`)), SHUTDOWN_TIMEOUT_MS);
  });
  try {
    await Promise.race([close(), timeout]);
  } finally {
    clearTimeout(timer);
  }
  out(`stopped (${why}) at ${clockText(clock.elapsed())} of scenario time after ${produced()} parcels; alerts fired: ${fired.length === 0 ? 'none' : fired.join('; ')}`);
}

export function registerDemoCommand(program: Command): void {
  program
    .command('demo')
    .summary('the invented parcel-inspection scenario, live: a line drifts and its alert fires; no broker needed')
    .description(
      'Run an invented scenario (a parcel-inspection classifier on three sorting lines; after a few minutes line 3\'s camera ' +
        'drifts and its margins collapse) through the same core as `headroom watch`, serving /metrics and the JSON API, ' +
        'in one process with no broker; or produce it to Kafka and watch it there (--kafka).',
    )
    .option('--speed <n>', 'run scenario time n times faster than the wall clock', '1')
    .option('--port <n>', `HTTP port (default ${DEFAULT_HTTP_PORT}, or a free port when that one is taken; 0: a free port)`)
    .option('--host <host>', 'HTTP address to listen on', '127.0.0.1')
    .option('--seed <n>', 'seed of the scenario: the same seed, the same parcels', String(SCENARIO_DEFAULTS.seed))
    .option('--rate <n>', 'parcels a second, all lines together, in scenario time', String(SCENARIO_DEFAULTS.eventsPerSecond))
    .option('--drift-at <duration>', "when line 3's camera starts to drift, in scenario time", '3m')
    .option('--duration <duration>', 'stop after this much scenario time (default: run until SIGINT or SIGTERM)')
    .option('--kafka <brokers>', 'produce the scenario to Kafka (host:port, comma-separated) and watch it there')
    .option('--topic <name>', 'with --kafka: the topic (default headroom-demo-<start time>, new each run)')
    .option('--produce-only', 'with --kafka: produce only; run no watcher and no HTTP server')
    .option('--write-reference <dir>', "write the scenario's reference file (headroom-reference/1) into dir and exit")
    .addHelpText('after', HELP)
    .action(async (flags: DemoFlags) => {
      try {
        await runDemo(flags);
      } finally {
        setTimeout(() => process.exit(process.exitCode ?? 1), 2_000).unref();
      }
    });
}
