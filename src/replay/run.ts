/**
 * `headroom replay` end to end: read (files, or a Kafka time range), decode and measure each event as the
 * watcher does, feed the ReplayEngine, then write the report model out as report.json, report.csv,
 * metrics.om and report.html (and, asked, reference files of the replayed range). The I/O edge around the
 * pure engine.
 *
 * A file that ends early (a .gz cut short) or fails part way is not fatal here, unlike for a reference:
 * a backfill of a month should not be lost to one bad hour. Its events up to the failure count; the file
 * is named in the report's totals.skipped and on stderr, and the exit code stays 0.
 */
import { createWriteStream } from 'node:fs';
import { randomBytes } from 'node:crypto';
import { mkdir, rename, unlink } from 'node:fs/promises';
import { basename, dirname, join } from 'node:path';
import { once } from 'node:events';
import { Kafka, logLevel } from 'kafkajs';
import type { logCreator } from 'kafkajs';
import type { KafkaConfig as KafkajsConfig } from 'kafkajs';
import { HeadroomError, isHeadroomError } from '../errors.js';
import { decodeScoredEvent, DEFAULT_DECODE_LIMITS } from '../events/index.js';
import type { DecodeLimits, DecodeResult, ScoredEvent } from '../events/index.js';
import { measureMargins } from '../margin/index.js';
import { formatReference, parseReference, ReferenceBuilder, referenceFileName } from '../reference/index.js';
import type { LoadedReference } from '../reference/index.js';
import { createProgress, formatBytes, formatRejectionSummary, listInputFiles, loadReferenceFile, readScoredEvents, RejectionTally } from '../sources/index.js';
import type { InputFile, Progress, ProgressOutput, SourceRejection } from '../sources/index.js';
import type { ModelSettings } from '../state/index.js';
import { writeTextAtomically } from '../files/atomic-write.js';
import { CdfPicker } from './cdf.js';
import { loadChartLibrary } from './chart-library.js';
import { reportCsv } from './csv.js';
import { reportHtml } from './html.js';
import { ReplayEngine } from './engine.js';
import { planRange, readRange } from './kafka-range.js';
import { openMetricsLines } from './openmetrics.js';
import { noAlerts, referenceLookup, REPORT_FORMAT, windowFigures, withAlerts } from './report.js';
import type { AlertEvaluator, ReplayReport, ReportEntry } from './report.js';
import type { ReplayWindow } from './window-spec.js';

export interface KafkaRange {
  readonly topic: string;
  readonly sinceMs: number;
  readonly untilMs: number;
  /** The kafkajs client options (brokers, TLS, SASL), from the config or --brokers. */
  readonly client: KafkajsConfig;
}

export interface ReplayOptions {
  /** Files or directories; exactly one of inputs and kafka. */
  readonly inputs?: readonly string[];
  readonly kafka?: KafkaRange;
  readonly window: ReplayWindow;
  readonly out: string;
  /** Settings per model (from a watch config); undefined: discover models and segment keys from the events. */
  readonly models?: readonly ModelSettings[];
  /** Thresholds of discovered models; default the reference files' thresholds, else 0.1 and 0.25. */
  readonly thresholds?: readonly number[];
  /** Reference files to compare with (from the config's models, plus --reference). */
  readonly references: readonly string[];
  readonly emitReference?: string;
  readonly limits?: DecodeLimits;
  readonly progress: boolean;
  /** Repeat each window's samples in metrics.om this often (0: once, at the window's end). */
  readonly metricsStepMs: number;
  readonly alerts?: AlertEvaluator;
}

export interface ReplayIo {
  readonly stdout: ProgressOutput;
  readonly stderr: ProgressOutput;
  /** Wall clock: events from the future, createdAt, and the progress rate. */
  readonly nowMs: () => number;
  readonly createKafka?: (options: KafkajsConfig) => Kafka;
}

const DEFAULT_THRESHOLDS = [0.1, 0.25];

/** What happens to each line or message, shared by both sources. */
class Intake {
  lines = 0;
  readonly tally = new RejectionTally();
  private readonly builders = new Map<string, ReferenceBuilder>();

  constructor(
    readonly engine: ReplayEngine,
    /** Set by the source once it knows the size of its input (Kafka: after the offsets are looked up). */
    public progress: Progress,
    private readonly emit: { createdAt: string; source: string; keysOf: (event: ScoredEvent) => readonly string[]; thresholdsOf: (model: string) => readonly number[] } | undefined,
  ) {}

  take(stream: string, partition: number, offset: string, result: DecodeResult<ScoredEvent> | SourceRejection, where: { file: string; line: number }): void {
    this.lines += 1;
    if (this.lines % 4096 === 0) this.progress.count(4096);
    if (!result.ok) {
      this.engine.reject(result.reason);
      this.tally.add(result, where.file, where.line);
      return;
    }
    const event = result.event;
    const margins = measureMargins(event.score, event.label);
    if (!margins.ok) {
      this.engine.reject(margins.reason);
      this.tally.add(margins, where.file, where.line);
      return;
    }
    this.engine.apply(stream, partition, event, margins, offset);
    if (this.emit !== undefined) this.builderFor(event).add(event);
  }

  references(): ReturnType<ReferenceBuilder['finish']>[] {
    return [...this.builders.values()].map((b) => b.finish());
  }

  private builderFor(event: ScoredEvent): ReferenceBuilder {
    const key = `${event.model}\u0000${event.version}`;
    let builder = this.builders.get(key);
    if (builder === undefined) {
      const e = this.emit as NonNullable<Intake['emit']>;
      builder = new ReferenceBuilder({ createdAt: e.createdAt, source: e.source, thresholds: e.thresholdsOf(event.model), segmentKeys: e.keysOf(event) });
      this.builders.set(key, builder);
    }
    return builder;
  }
}

async function readFiles(files: readonly InputFile[], intake: Intake, limits: DecodeLimits, progress: Progress, skipped: { source: string; reason: string }[]): Promise<void> {
  for (const file of files) intake.engine.addStream(file.path);
  for (const file of files) {
    try {
      for await (const item of readScoredEvents([file], { limits, fallbackTimeMs: (f) => Math.floor(f.mtimeMs), onBytes: (n) => progress.add(n) })) {
        intake.take(file.path, 0, String(item.line), item.result, item);
      }
    } catch (error) {
      if (!isHeadroomError(error)) throw error;
      // The rest of this file is lost, not the replay: the summary and the report say so.
      skipped.push({ source: file.path, reason: error.message });
    }
    intake.engine.finishStream(file.path);
  }
}

async function readKafka(range: KafkaRange, intake: Intake, limits: DecodeLimits, io: ReplayIo, progressOn: boolean): Promise<Progress> {
  // Only kafkajs warnings and errors, one line each on stderr: stdout is for the paths written.
  const creator: logCreator = () => (entry) => void io.stderr.write(`kafka: ${entry.log.message}${entry.log.error === undefined ? '' : ` (${String(entry.log.error)})`}\n`);
  const kafka = (io.createKafka ?? ((o) => new Kafka(o)))({ logLevel: logLevel.WARN, logCreator: creator, ...range.client });
  const admin = kafka.admin();
  let progress: Progress | undefined;
  try {
    await admin.connect();
    const ranges = await planRange(admin, range.topic, range.sinceMs, range.untilMs);
    const total = ranges.reduce((n, r) => n + Number(BigInt(r.end) - BigInt(r.start)), 0);
    io.stderr.write(`${range.topic}: ${total} messages in range over ${ranges.length} partitions (${ranges.map((r) => `${r.partition}: ${r.start}..${r.end}`).join(', ')})\n`);
    progress = createProgress('replaying', total, io.stderr, progressOn, { formatAmount: (n) => `${n} messages`, minTotal: 100_000, clockMs: io.nowMs });
    const p = progress;
    intake.progress = p;
    for (const r of ranges) intake.engine.addStream(range.topic, r.partition);
    const empty = new Uint8Array(0);
    await readRange(kafka, admin, range.topic, ranges, {
      onMessage: (partition, message) => {
        p.add(1);
        const result = decodeScoredEvent(message.value ?? empty, limits, Number(message.timestamp));
        intake.take(range.topic, partition, message.offset, result, { file: `${range.topic}/${partition}`, line: Number(message.offset) });
      },
      onPartitionDone: (partition) => intake.engine.finishStream(range.topic, partition),
    });
    return progress;
  } catch (error) {
    progress?.stop();
    if (isHeadroomError(error)) throw error;
    throw new HeadroomError('HR_ERR_REPLAY_KAFKA', `${range.topic}: ${error instanceof Error ? error.message : String(error)}`, { cause: error });
  } finally {
    await admin.disconnect().catch(() => undefined);
  }
}

async function writeFileAtomically(path: string, text: string): Promise<void> {
  try {
    await mkdir(dirname(path), { recursive: true });
    await writeTextAtomically(path, text, join(dirname(path), `.${basename(path)}.${process.pid}.${randomBytes(4).toString('hex')}.tmp`));
  } catch (error) {
    throw new HeadroomError('HR_ERR_OUTPUT_UNWRITABLE', `${path}: ${error instanceof Error ? error.message : String(error)}`, { cause: error, context: { path } });
  }
}

async function writeLines(path: string, lines: Iterable<string>): Promise<void> {
  const temp = `${path}.${process.pid}.tmp`;
  try {
    const out = createWriteStream(temp, { flags: 'w' });
    for (const line of lines) if (!out.write(line)) await once(out, 'drain');
    out.end();
    await once(out, 'finish');
    await rename(temp, path);
  } catch (error) {
    await unlink(temp).catch(() => undefined);
    throw new HeadroomError('HR_ERR_OUTPUT_UNWRITABLE', `${path}: ${error instanceof Error ? error.message : String(error)}`, { cause: error, context: { path } });
  }
}

function describeSource(options: ReplayOptions, files: readonly InputFile[]): string {
  if (options.kafka !== undefined) {
    const k = options.kafka;
    return `topic ${k.topic} from ${new Date(k.sinceMs).toISOString()} until ${new Date(k.untilMs).toISOString()}`;
  }
  const shown = files.slice(0, 5).map((f) => f.path);
  return `${files.length} file${files.length === 1 ? '' : 's'}: ${shown.join(', ')}${files.length > shown.length ? ` and ${files.length - shown.length} more` : ''}`;
}

export interface ReplayResult {
  readonly report: ReplayReport;
  /** Paths written, report files first. */
  readonly written: readonly string[];
}

export async function runReplay(options: ReplayOptions, io: ReplayIo): Promise<ReplayResult> {
  if ((options.inputs === undefined) === (options.kafka === undefined)) {
    throw new HeadroomError('HR_ERR_CLI_USAGE', '--input or --topic: give files or a Kafka topic to replay, not both and not neither', { context: { option: '--input' } });
  }
  const references: LoadedReference[] = [];
  for (const path of options.references) references.push(await loadReferenceFile(path));
  const files = options.inputs === undefined ? [] : await listInputFiles(options.inputs);
  const createdAt = new Date(io.nowMs()).toISOString();
  const source = describeSource(options, files);
  const thresholdsOf = (model: string): readonly number[] => {
    const own = options.models?.find((m) => m.name === model) ?? options.models?.find((m) => m.name === '*');
    if (own?.window?.thresholds !== undefined) return own.window.thresholds;
    if (options.thresholds !== undefined) return options.thresholds;
    const fromFiles = [...new Set(references.filter((r) => r.model === model).flatMap((r) => r.thresholds))].sort((a, b) => a - b);
    return fromFiles.length > 0 ? fromFiles : DEFAULT_THRESHOLDS;
  };
  // Discovered models all share one settings entry, so their thresholds must be one list.
  const discoverThresholds = options.thresholds ?? [...new Set([...references.flatMap((r) => r.thresholds)])].sort((a, b) => a - b);
  const entries: ReportEntry[] = [];
  const lookup = referenceLookup(references);
  const cdfs = new CdfPicker();
  const engine = new ReplayEngine({
    window: options.window,
    models: options.models,
    discover: { window: { thresholds: discoverThresholds.length > 0 ? discoverThresholds : DEFAULT_THRESHOLDS } },
    nowMs: io.nowMs(),
    onWindow: (closed) => {
      for (const f of windowFigures(closed, options.window.name, lookup)) {
        entries.push(f.entry);
        cdfs.observe(f.entry, f.live, f.reference);
      }
    },
  });
  const keysOf = (event: ScoredEvent): readonly string[] => {
    const own = options.models?.find((m) => m.name === event.model) ?? options.models?.find((m) => m.name === '*');
    return own !== undefined ? (own.segmentKeys ?? []) : Object.keys(event.segment);
  };
  const limits = options.limits ?? DEFAULT_DECODE_LIMITS;
  const skipped: { source: string; reason: string }[] = [];
  let progress: Progress;
  let intake: Intake;
  const emit = options.emitReference === undefined ? undefined : { createdAt, source: `replay of ${source}`, keysOf, thresholdsOf };
  if (options.kafka !== undefined) {
    intake = new Intake(engine, { add: () => {}, count: () => {}, stop: () => {} }, emit);
    progress = await readKafka(options.kafka, intake, limits, io, options.progress);
  } else {
    progress = createProgress('replaying', files.reduce((n, f) => n + f.bytes, 0), io.stderr, options.progress, { clockMs: io.nowMs });
    intake = new Intake(engine, progress, emit);
    await readFiles(files, intake, limits, progress, skipped);
  }
  engine.finish();
  progress.stop();

  const counts = engine.counts();
  entries.sort((a, b) => (a.start < b.start ? -1 : a.start > b.start ? 1 : 0));
  const report: ReplayReport = {
    format: REPORT_FORMAT,
    createdAt,
    source,
    window: options.window.name,
    totals: { lines: intake.lines, events: counts.events, rejected: counts.rejected, afterClose: counts.afterClose, unwatched: counts.unwatched, skipped },
    windows: withAlerts(entries, options.alerts ?? noAlerts),
    cdfs: cdfs.result(),
  };

  io.stderr.write(formatRejectionSummary(intake.tally, intake.lines));
  const written = await writeReport(report, options, io);
  if (options.emitReference !== undefined) written.push(...(await writeReferences(intake, options.emitReference, io)));
  io.stderr.write(summaryText(report, engine));
  return { report, written };
}

/** Every file of the report from the one ReplayReport object; each writer takes it as it is. */
async function writeReport(report: ReplayReport, options: ReplayOptions, io: ReplayIo): Promise<string[]> {
  try {
    await mkdir(options.out, { recursive: true });
  } catch (error) {
    throw new HeadroomError('HR_ERR_OUTPUT_UNWRITABLE', `${options.out}: ${error instanceof Error ? error.message : String(error)}`, { cause: error });
  }
  const json = join(options.out, 'report.json');
  const csv = join(options.out, 'report.csv');
  const om = join(options.out, 'metrics.om');
  const html = join(options.out, 'report.html');
  await writeFileAtomically(json, `${JSON.stringify(report, null, 2)}\n`);
  await writeFileAtomically(csv, reportCsv(report));
  await writeLines(om, openMetricsLines(report, options.metricsStepMs));
  await writeFileAtomically(html, reportHtml(report, await loadChartLibrary()));
  for (const path of [json, csv, om, html]) io.stdout.write(`${path}\n`);
  return [json, csv, om, html];
}

async function writeReferences(intake: Intake, dir: string, io: ReplayIo): Promise<string[]> {
  const written: string[] = [];
  for (const reference of intake.references()) {
    const text = formatReference(reference);
    const path = join(dir, referenceFileName(reference.model, reference.version));
    parseReference(JSON.parse(text), path); // never leave a file `watch` would refuse
    await writeFileAtomically(path, text);
    io.stderr.write(`wrote reference ${path}: ${reference.model}@${reference.version}, ${reference.n} events, ${formatBytes(Buffer.byteLength(text))}\n`);
    io.stdout.write(`${path}\n`);
    written.push(path);
  }
  return written;
}

function summaryText(report: ReplayReport, engine: ReplayEngine): string {
  const t = report.totals;
  const rejected = Object.values(t.rejected).reduce((a, b) => a + (b ?? 0), 0);
  const windows = new Set(report.windows.map((e) => e.start)).size;
  const series = new Set(report.windows.map((e) => `${e.model}\u0000${e.version}\u0000${e.segment}`)).size;
  const lines = [`replayed ${t.events} events of ${t.lines} lines into ${windows} window${windows === 1 ? '' : 's'} of ${report.window} over ${series} series; ${rejected} rejected`];
  if (t.afterClose > 0) lines.push(`skipped ${t.afterClose} events whose ${report.window} window had already been reported (the input is not in time order; give files oldest first, or use --window total)`);
  if (t.unwatched > 0) lines.push(`skipped ${t.unwatched} events of models the configuration does not name`);
  for (const s of t.skipped) lines.push(`skipped the rest of ${s.source}: ${s.reason}`);
  const all = report.windows.filter((e) => e.segment === 'all');
  const late = all.reduce((n, e) => n + e.late, 0);
  const future = all.reduce((n, e) => n + e.future, 0);
  if (late > 0) lines.push(`${late} events came later than the lateness allows behind their stream's newest event: counted as late, not in the figures`);
  if (future > 0) lines.push(`${future} events are dated ahead of this machine's clock by more than maxFuture: counted as from the future, not in the figures`);
  const keys = engine.discoveredKeys();
  if (keys.size > 0) lines.push(`segment keys found: ${[...keys].map(([m, k]) => `${m}: ${k.length === 0 ? '(none)' : k.join(', ')}`).join('; ')}`);
  return `${lines.join('\n')}\n`;
}
