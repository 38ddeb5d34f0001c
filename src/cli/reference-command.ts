/**
 * `headroom reference`: scored reference events in, `headroom-reference/1` files out. The edge where the
 * clock is read (createdAt) and files are written; the figures themselves are src/reference's.
 *
 * Everything the user should see goes to stderr (progress, the rejection table, what was written), and
 * only the paths written go to stdout, one a line, so a script can pick them up.
 */
import { randomBytes } from 'node:crypto';
import { mkdir, stat } from 'node:fs/promises';
import { basename, dirname, join, sep } from 'node:path';
import type { Command } from 'commander';
import { HeadroomError } from '../errors.js';
import {
  formatReference,
  parseReference,
  DEFAULT_MAX_SEGMENT_VALUES,
  DEFAULT_REFERENCE_THRESHOLDS,
  ReferenceBuilder,
  referenceFileName,
} from '../reference/index.js';
import type { ReferenceOptions } from '../reference/index.js';
import { DEFAULT_COMPRESSION, MAX_COMPRESSION, MAX_THRESHOLDS, MIN_COMPRESSION } from '../sketch/index.js';
import { createProgress, formatBytes, formatRejectionSummary, listInputFiles, readScoredEvents, RejectionTally } from '../sources/index.js';
import type { InputFile, ProgressOutput } from '../sources/index.js';
import { writeTextAtomically } from '../files/atomic-write.js';

export interface ReferenceCommandOptions {
  readonly inputs: readonly string[];
  readonly out: string;
  readonly model?: string;
  readonly version?: string;
  readonly thresholds: readonly number[];
  readonly segmentKeys: readonly string[];
  readonly maxSegmentValues: number;
  readonly compression: number;
  readonly source?: string;
  readonly progress: boolean;
}

export interface CommandIo {
  readonly stdout: ProgressOutput;
  readonly stderr: ProgressOutput;
  readonly now: () => Date;
}

const EXAMPLES = `
Input: JSON lines (one scored event a line, as on Kafka), gzipped JSON lines, or CSV (plain or .gz)
with a header row and one event a row, columns in any order:
  id, model, version, score_kind   required; score_kind is probability | logit | votes | classes | margin
  p | z | sum,total | margin       the score's numbers, by kind
  class:<name>                     one column per class of a classes score
  time, label, segment:<key>       optional
An empty cell is an absent field; quote a cell holding commas, quotes or newlines ("" for a quote).
A directory stands for its *.jsonl, *.jsonl.gz, *.csv and *.csv.gz files. Events without a time take
their file's modification time (time only sets the reference's recorded time range). Lines that do
not decode are counted by reason and listed at the end; a .gz file cut short stops the build.

Output: one headroom-reference/1 file per model version. With several model versions in the input,
choose one with --model/--version, or give a directory as --out (an existing one, or a path ending
in /) to get one <model>@<version>.json each. Files are written whole or not at all.

Examples:
  $ headroom reference --input heldout/parcel-damage.jsonl.gz --out references/parcel-damage.json
  $ headroom reference --input heldout/ --out references/ --thresholds 0.05,0.1,0.25 --segment-keys line
  $ headroom reference --input scored.csv --model parcel-damage --version 2026.11.3 --out ref.json
`;

function usage(option: string, detail: string, value: unknown): HeadroomError {
  return new HeadroomError('HR_ERR_CLI_USAGE', `${option}: ${detail}`, { context: { option, value } });
}

const NUMBER = /^[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?$/;

function list(text: string): string[] {
  return text.split(',').map((s) => s.trim());
}

export function parseThresholds(text: string): number[] {
  const example = 'give numbers in (0, 1) separated by commas, e.g. --thresholds 0.1,0.25';
  const values = list(text).map((item) => {
    if (!NUMBER.test(item)) throw usage('--thresholds', `${JSON.stringify(item)} is not a number; ${example}`, text);
    const t = Number(item);
    if (!(t > 0 && t < 1)) throw usage('--thresholds', `${item} is not in (0, 1); ${example}`, text);
    return t;
  });
  if (new Set(values).size !== values.length) throw usage('--thresholds', `${text} names a threshold twice`, text);
  if (values.length > MAX_THRESHOLDS) throw usage('--thresholds', `at most ${MAX_THRESHOLDS} thresholds, got ${values.length}`, text);
  return values.sort((a, b) => a - b);
}

export function parseSegmentKeys(text: string | undefined): string[] {
  if (text === undefined) return [];
  const keys = list(text);
  for (const key of keys) {
    if (key === '' || key.includes('=') || key === '__proto__') {
      throw usage('--segment-keys', `${JSON.stringify(key)} is not a segment key; give names without "=" separated by commas, e.g. --segment-keys line,site`, text);
    }
  }
  if (new Set(keys).size !== keys.length) throw usage('--segment-keys', `${text} names a key twice`, text);
  return keys;
}

function parseInteger(option: string, text: string, min: number, max: number): number {
  const n = Number(text);
  if (!/^\d+$/.test(text.trim()) || !(n >= min && n <= max)) throw usage(option, `${JSON.stringify(text)} is not a whole number in [${min}, ${max}]`, text);
  return n;
}

/** commander's raw option values → checked options; every problem names its flag. */
export function parseReferenceOptions(raw: Record<string, unknown>): ReferenceCommandOptions {
  const text = (key: string): string | undefined => (typeof raw[key] === 'string' ? (raw[key] as string) : undefined);
  const inputs = Array.isArray(raw.input) ? (raw.input as string[]) : [];
  if (inputs.length === 0) throw usage('--input', 'name at least one file or directory', raw.input);
  const out = text('out');
  if (out === undefined || out === '') throw usage('--out', 'name the reference file (or a directory) to write', raw.out);
  for (const key of ['model', 'version', 'source'] as const) {
    if (text(key) === '') throw usage(`--${key}`, 'must not be empty', '');
  }
  return {
    inputs,
    out,
    model: text('model'),
    version: text('version'),
    thresholds: parseThresholds(text('thresholds') ?? DEFAULT_REFERENCE_THRESHOLDS.join(',')),
    segmentKeys: parseSegmentKeys(text('segmentKeys')),
    maxSegmentValues: parseInteger('--max-segment-values', text('maxSegmentValues') ?? String(DEFAULT_MAX_SEGMENT_VALUES), 1, 10_000),
    compression: parseInteger('--compression', text('compression') ?? String(DEFAULT_COMPRESSION), MIN_COMPRESSION, MAX_COMPRESSION),
    source: text('source'),
    progress: raw.progress !== false,
  };
}

function describeInputs(files: readonly InputFile[]): string {
  const shown = files.slice(0, 5).map((f) => f.path);
  const more = files.length > shown.length ? ` and ${files.length - shown.length} more` : '';
  return `${files.length} file${files.length === 1 ? '' : 's'}: ${shown.join(', ')}${more}`;
}

async function isDirectoryTarget(out: string): Promise<boolean> {
  if (out.endsWith('/') || out.endsWith(sep)) return true;
  try {
    return (await stat(out)).isDirectory();
  } catch {
    return false;
  }
}

/** Temp file beside the target, then rename: a reader sees the old file or the new one, never half of one. */
export async function writeFileAtomically(path: string, text: string): Promise<void> {
  const temp = join(dirname(path), `.${basename(path)}.${process.pid}.${randomBytes(4).toString('hex')}.tmp`);
  try {
    await mkdir(dirname(path), { recursive: true });
    await writeTextAtomically(path, text, temp);
  } catch (error) {
    throw new HeadroomError('HR_ERR_OUTPUT_UNWRITABLE', `${path}: ${error instanceof Error ? error.message : String(error)}`, {
      cause: error,
      context: { path },
    });
  }
}

interface Group {
  readonly model: string;
  readonly version: string;
  readonly builder: ReferenceBuilder;
}

export async function runReference(options: ReferenceCommandOptions, io: CommandIo): Promise<string[]> {
  const files = await listInputFiles(options.inputs);
  const totalBytes = files.reduce((sum, f) => sum + f.bytes, 0);
  const referenceOptions: ReferenceOptions = {
    createdAt: io.now().toISOString(),
    source: options.source ?? describeInputs(files),
    thresholds: options.thresholds,
    segmentKeys: options.segmentKeys,
    maxSegmentValues: options.maxSegmentValues,
    compression: options.compression,
  };
  const groups = new Map<string, Group>();
  const tally = new RejectionTally();
  const otherModels = new Map<string, number>();
  let lines = 0;
  const progress = createProgress('reading', totalBytes, io.stderr, options.progress);
  try {
    const items = readScoredEvents(files, { fallbackTimeMs: (f) => Math.floor(f.mtimeMs), onBytes: (n) => progress.add(n) });
    for await (const item of items) {
      lines++;
      if (!item.result.ok) {
        tally.add(item.result, item.file, item.line);
        continue;
      }
      const event = item.result.event;
      const name = `${event.model}@${event.version}`;
      if ((options.model !== undefined && event.model !== options.model) || (options.version !== undefined && event.version !== options.version)) {
        otherModels.set(name, (otherModels.get(name) ?? 0) + 1);
        continue;
      }
      // A NUL cannot occur in a model or version (the decoder refuses control characters), so keys are unique.
      const key = `${event.model}\u0000${event.version}`;
      let group = groups.get(key);
      if (group === undefined) {
        group = { model: event.model, version: event.version, builder: new ReferenceBuilder(referenceOptions) };
        groups.set(key, group);
      }
      const rejected = group.builder.add(event);
      if (rejected !== undefined) tally.add(rejected, item.file, item.line);
    }
  } catch (error) {
    // A file that fails part way (a .gz cut short) still shows what was wrong with the lines before it.
    progress.stop();
    io.stderr.write(formatRejectionSummary(tally, lines));
    throw error;
  }
  progress.stop();
  io.stderr.write(formatRejectionSummary(tally, lines));
  if (otherModels.size > 0) {
    const skipped = [...otherModels].map(([name, n]) => `${name} (${n})`).join(', ');
    io.stderr.write(`left out events of other model versions: ${skipped}\n`);
  }
  const usable = [...groups.values()].filter((g) => g.builder.count > 0);
  if (usable.length === 0) {
    const chosen = options.model !== undefined || options.version !== undefined ? ` of ${options.model ?? '*'}@${options.version ?? '*'}` : '';
    const why = lines === 0 ? 'the input holds no lines' : `all ${lines} lines were rejected or left out`;
    throw new HeadroomError('HR_ERR_INPUT_EMPTY', `no valid scored events${chosen} in ${describeInputs(files)}; ${why}, so no reference was written`, {
      context: { lines, rejected: tally.total },
    });
  }
  const toDirectory = await isDirectoryTarget(options.out);
  if (usable.length > 1 && !toDirectory) {
    const found = usable.map((g) => `${g.model}@${g.version} (${g.builder.count} events)`);
    throw new HeadroomError(
      'HR_ERR_INPUT_AMBIGUOUS',
      `the input holds ${usable.length} model versions: ${found.join(', ')}; choose one with --model/--version, or give a directory as --out (ending in /) for one file each`,
      { context: { found } },
    );
  }

  const written: string[] = [];
  for (const group of usable) {
    const reference = group.builder.finish();
    const text = formatReference(reference);
    const path = toDirectory ? join(options.out, referenceFileName(group.model, group.version)) : options.out;
    // Read back before writing: never leave a file that `watch` would then refuse to load.
    parseReference(JSON.parse(text), path);
    await writeFileAtomically(path, text);
    written.push(path);
    const segments = Object.keys(reference.segments);
    const shownSegments = segments.length > 8 ? `${segments.slice(0, 8).join(', ')}, ...` : segments.join(', ');
    io.stderr.write(
      `wrote ${path}: ${group.model}@${group.version}, ${reference.n} events, ${segments.length} segment${segments.length === 1 ? '' : 's'} (${shownSegments}), ${formatBytes(Buffer.byteLength(text))}\n`,
    );
    io.stdout.write(`${path}\n`);
  }
  return written;
}

export function registerReferenceCommand(program: Command): void {
  program
    .command('reference')
    .summary('build a reference file from scored reference events')
    .description(
      'Build a headroom-reference/1 file: the margin distribution a model version had on its reference (held-out) data, ' +
        'with exact low-margin shares, PSI decile edges and, when events carry labels, error rate and calibration. ' +
        '`watch`, `replay` and `demo` compare live margins against it.',
    )
    .requiredOption('-i, --input <path...>', 'event files (.jsonl, .jsonl.gz, .csv, .csv.gz) or directories of them')
    .requiredOption('-o, --out <path>', 'reference file to write, or a directory (existing, or ending in /) for <model>@<version>.json files')
    .option('--model <name>', 'use only events of this model')
    .option('--version <version>', 'use only events of this model version')
    .option('--thresholds <list>', 'low-margin thresholds θ, comma-separated, each in (0, 1)', DEFAULT_REFERENCE_THRESHOLDS.join(','))
    .option('--segment-keys <list>', 'segment keys that get a reference of their own per value, comma-separated (e.g. line,site)')
    .option('--max-segment-values <n>', 'per segment key, values beyond the n most frequent share one segment k=other', String(DEFAULT_MAX_SEGMENT_VALUES))
    .option('--compression <n>', `digest compression δ, ${MIN_COMPRESSION}-${MAX_COMPRESSION} (larger: more accurate, bigger file)`, String(DEFAULT_COMPRESSION))
    .option('--source <text>', 'where the events came from, recorded in the file (default: the input paths)')
    .option('--no-progress', 'show no progress, even for large inputs')
    .addHelpText('after', EXAMPLES)
    .action(async (raw: Record<string, unknown>) => {
      await runReference(parseReferenceOptions(raw), { stdout: process.stdout, stderr: process.stderr, now: () => new Date() });
    });
}
