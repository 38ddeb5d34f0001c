/**
 * `headroom replay`: logged scored events (files, or a Kafka topic between two times) through the
 * watcher's core into a report directory. Option checks live here (each problem names its flag); the
 * work is src/replay's. Paths written go to stdout, one a line; everything else to stderr.
 */
import type { Command } from 'commander';
import { ENV_VARIABLES, kafkaClientOptions, loadConfig, parseDuration, readTlsMaterial } from '../config/index.js';
import type { Env } from '../config/index.js';
import { HeadroomError } from '../errors.js';
import { parseReplayWindow, ruleAlerts, runReplay } from '../replay/index.js';
import type { ReplayIo, ReplayOptions } from '../replay/index.js';
import { parseThresholds } from './reference-command.js';

const HELP = `
Sources (one of):
  --input PATH...            JSON lines or CSV files, plain or .gz, or directories of them (the
                             formats of \`headroom reference --help\`). Files are read one after another
                             in the order given, a directory's in name order: give them oldest first.
  --topic T --since ISO --until ISO
                             a Kafka topic between two times: per partition, the offsets of the first
                             messages at or after --since and --until (by message timestamp) are looked
                             up, and the end offsets are fixed at the start, so messages produced while
                             the replay runs are left out. Brokers from --config (kafka.*, TLS and SASL
                             included, ${ENV_VARIABLES.brokers} overrides) or --brokers.

Windows: --window 1h cuts event time into 1-hour windows aligned to the Unix epoch (UTC: 10:00-11:00,
and 1d runs midnight to midnight UTC); any whole number of minutes from 1m to 366d. --window total is
one comparison over everything. A window is reported once every source being read has passed its end
plus the lateness; an event for a window already reported is counted and named in the summary.

Series and references: with --config, the models, thresholds, segment keys, series cap, history and
lateness of that watch configuration, and its reference files. Without one, every model is replayed
and sliced by every segment key its events carry (up to 200 series a model, as in watch), with the
thresholds of --thresholds, else of the --reference files, else 0.1 and 0.25. Events are decoded,
measured, routed and windowed by the code \`headroom watch\` runs, so the same events give the same
figures.

Output in --out DIR:
  report.json   format headroom-report/1: per window and series the count, low-margin shares with
                Wilson intervals and the reference share, KS (statistic, p-value), PSI, Wasserstein-1,
                margin quantiles, alerts; and per series the margin CDFs of its reference and of its
                first, last and largest-KS windows
  report.csv    the same, one row per window and series
  metrics.om    OpenMetrics with timestamps, the metric names of watch's /metrics; load it with
                  promtool tsdb create-blocks-from openmetrics DIR/metrics.om PROMETHEUS_DATA_DIR
  report.html   one self-contained page (opens offline): per series, the low-margin share over time
                against the reference, KS/PSI/Wasserstein over time, and those CDFs against the reference
With --emit-reference DIR2, also one headroom-reference/1 file per model version of the replayed range.

Lines that do not decode are counted by reason and listed at the end; a file that ends early (a .gz cut
short) is named, its events up to that point kept, and the replay goes on (exit 0).

Examples:
  $ headroom replay --input logs/2026-11/ --window 1h --reference references/parcel-damage.json --out replay/nov
  $ headroom replay --input day1.jsonl.gz day2.jsonl.gz --config examples/watch.yaml --window 1d --out replay/
  $ headroom replay --topic parcel-scores --since 2026-12-01T00:00:00Z --until 2026-12-02T00:00:00Z \\
      --config examples/watch.yaml --window 15m --out replay/dec01
  $ headroom replay --input heldout/ --window total --emit-reference references/ --out replay/heldout
`;

function usage(option: string, detail: string, value: unknown): HeadroomError {
  return new HeadroomError('HR_ERR_CLI_USAGE', `${option}: ${detail}`, { context: { option, value } });
}

const ISO = /^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}(:\d{2}(\.\d+)?)?(Z|[+-]\d{2}:\d{2})$/;

export function parseInstant(option: string, text: string | undefined): number {
  if (text === undefined || text === '') throw usage(option, 'give an ISO-8601 time with a zone, e.g. 2026-12-01T00:00:00Z', text);
  const ms = Date.parse(text);
  if (!ISO.test(text) || !Number.isFinite(ms)) throw usage(option, `${JSON.stringify(text)} is not an ISO-8601 time with a zone, e.g. 2026-12-01T00:00:00Z`, text);
  return ms;
}

export interface ReplayCommandOptions extends Omit<ReplayOptions, 'kafka' | 'models' | 'references' | 'limits'> {
  readonly config?: string;
  readonly references: readonly string[];
  readonly topic?: { readonly name: string; readonly sinceMs: number; readonly untilMs: number; readonly brokers?: readonly string[] };
}

/** commander's raw option values → checked options; every problem names its flag. */
export function parseReplayOptions(raw: Record<string, unknown>): ReplayCommandOptions {
  const text = (key: string): string | undefined => (typeof raw[key] === 'string' ? (raw[key] as string) : undefined);
  const inputs = Array.isArray(raw.input) ? (raw.input as string[]) : undefined;
  const topicName = text('topic');
  if (inputs === undefined && topicName === undefined) throw usage('--input', 'name files or directories to replay, or a Kafka topic with --topic', undefined);
  if (inputs !== undefined && topicName !== undefined) throw usage('--topic', 'replays a Kafka topic; it cannot be combined with --input', topicName);
  if (topicName === undefined) {
    for (const flag of ['since', 'until', 'brokers'] as const) if (text(flag) !== undefined) throw usage(`--${flag}`, 'goes with --topic', text(flag));
  }
  const out = text('out');
  if (out === undefined || out === '') throw usage('--out', 'name the directory to write the report into', out);
  let topic: ReplayCommandOptions['topic'];
  if (topicName !== undefined) {
    if (topicName === '') throw usage('--topic', 'must not be empty', topicName);
    const sinceMs = parseInstant('--since', text('since'));
    const untilMs = parseInstant('--until', text('until'));
    if (untilMs <= sinceMs) throw usage('--until', `must be after --since (${text('since')})`, text('until'));
    const brokersText = text('brokers');
    const brokers = brokersText?.split(',').map((b) => b.trim());
    if (brokers !== undefined && brokers.some((b) => !/^[^\s:]+:\d{1,5}$/.test(b))) throw usage('--brokers', `${JSON.stringify(brokersText)} is not a list of host:port`, brokersText);
    if (brokers === undefined && text('config') === undefined) throw usage('--brokers', 'name the brokers (host:port,...), or give --config with kafka.brokers', undefined);
    topic = { name: topicName, sinceMs, untilMs, brokers };
  }
  const stepText = text('metricsStep') ?? '1m';
  let metricsStepMs = 0;
  if (stepText !== '0') {
    const step = parseDuration(stepText);
    if (!step.ok) throw usage('--metrics-step', `${step.detail}, or 0`, stepText);
    metricsStepMs = step.ms;
  }
  const references = Array.isArray(raw.reference) ? (raw.reference as string[]) : [];
  const emitReference = text('emitReference');
  if (emitReference === '') throw usage('--emit-reference', 'must name a directory', emitReference);
  return {
    inputs,
    topic,
    out,
    config: text('config'),
    window: parseReplayWindow(text('window') ?? '1h'),
    references,
    thresholds: text('thresholds') === undefined ? undefined : parseThresholds(text('thresholds') as string),
    emitReference,
    progress: raw.progress !== false,
    metricsStepMs,
  };
}

export async function runReplayCommand(options: ReplayCommandOptions, io: ReplayIo, env: Env): Promise<void> {
  const loaded = options.config === undefined ? undefined : await loadConfig(options.config, env);
  if (loaded !== undefined) for (const warning of loaded.warnings) io.stderr.write(`warning: ${warning}\n`);
  const config = loaded?.config;
  if (config !== undefined && options.thresholds !== undefined) throw usage('--thresholds', 'comes from the models of --config; give it only without --config', options.thresholds);
  const references = [...(config?.models.flatMap((m) => (m.reference === null ? [] : [m.reference])) ?? []), ...options.references];
  let kafka: ReplayOptions['kafka'];
  if (options.topic !== undefined) {
    const client =
      options.topic.brokers !== undefined
        ? { clientId: config?.kafka.clientId ?? 'headroom-replay', brokers: [...options.topic.brokers] }
        : kafkaClientOptions(config as NonNullable<typeof config>, await readTlsMaterial(config as NonNullable<typeof config>));
    kafka = { topic: options.topic.name, sinceMs: options.topic.sinceMs, untilMs: options.topic.untilMs, client };
  }
  await runReplay(
    {
      inputs: options.inputs,
      kafka,
      window: options.window,
      out: options.out,
      models: config?.models,
      thresholds: options.thresholds,
      references: [...new Set(references)],
      emitReference: options.emitReference,
      limits: config?.decode,
      progress: options.progress,
      metricsStepMs: options.metricsStepMs,
      ...(config === undefined || config.alerts.rules.length === 0 ? {} : { alerts: ruleAlerts(config.alerts.rules) }),
    },
    io,
  );
}

export function registerReplayCommand(program: Command): void {
  program
    .command('replay')
    .summary('backfill comparisons from logged events (files or a Kafka time range) into reports and metrics')
    .description(
      'Replay scored events from files or from a Kafka topic between two times through the same decoding, routing, ' +
        'windows and comparisons as `headroom watch`, and write a report (JSON, CSV, a self-contained HTML page) and OpenMetrics with timestamps ' +
        'for backfilling Prometheus.',
    )
    .option('-i, --input <path...>', 'event files (.jsonl, .jsonl.gz, .csv, .csv.gz) or directories of them')
    .option('--topic <name>', 'replay this Kafka topic instead of files (with --since and --until)')
    .option('--since <time>', 'with --topic: ISO-8601 start, inclusive, by message timestamp (e.g. 2026-12-01T00:00:00Z)')
    .option('--until <time>', 'with --topic: ISO-8601 end, exclusive')
    .option('--brokers <list>', 'with --topic and no --config: brokers, host:port comma-separated')
    .requiredOption('-o, --out <dir>', 'directory for report.json, report.csv, metrics.om and report.html (made if missing)')
    .option('--window <length>', 'event-time window: a duration such as 15m, 1h, 1d (aligned to the epoch, UTC), or total', '1h')
    .option('-c, --config <file>', 'a watch configuration: models, thresholds, segment keys, references, history, brokers')
    .option('--reference <file>', 'a reference file to compare with (repeat for several models)', (value: string, list: string[] = []) => [...list, value])
    .option('--thresholds <list>', 'without --config: low-margin thresholds, comma-separated, each in (0, 1)')
    .option('--emit-reference <dir>', 'also write one reference file per model version of the replayed events into this directory')
    .option('--metrics-step <duration>', 'in metrics.om, repeat each window\'s figures this often until the next window ends (0: once, at its end)', '1m')
    .option('--no-progress', 'show no progress, even for large inputs')
    .addHelpText('after', HELP)
    .action(async (raw: Record<string, unknown>) => {
      await runReplayCommand(parseReplayOptions(raw), { stdout: process.stdout, stderr: process.stderr, nowMs: () => Date.now() }, process.env);
    });
}
