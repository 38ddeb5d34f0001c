/**
 * Progress of reading inputs, by bytes read from disk (compressed bytes for .gz, so the total is known
 * up front from the file sizes). A bar on a terminal; on a pipe or a CI log a plain line at each tenth,
 * since a redrawn bar would fill a log with carriage returns. Small inputs show nothing: they are done
 * before a bar would be readable.
 */
import cliProgress from 'cli-progress';

export interface ProgressOutput {
  write(text: string): unknown;
  readonly isTTY?: boolean;
}

export interface Progress {
  add(bytes: number): void;
  /** Events processed, for the rate shown beside the bar (only with ProgressOptions.clockMs). */
  count(events: number): void;
  stop(): void;
}

export interface ProgressOptions {
  /** How amounts are written (default formatBytes); e.g. messages for a Kafka range. */
  readonly formatAmount?: (n: number) => string;
  /** Below this total nothing is shown; default PROGRESS_MIN_BYTES. */
  readonly minTotal?: number;
  /** A clock (ms) to show the rate of counted events; without one no rate is shown. */
  readonly clockMs?: () => number;
}

/** Below this, no progress is shown. */
export const PROGRESS_MIN_BYTES = 16 * 1024 * 1024;

const NO_PROGRESS: Progress = { add: () => {}, count: () => {}, stop: () => {} };

export function formatBytes(bytes: number): string {
  if (bytes < 1024) return `${bytes} B`;
  if (bytes < 1024 * 1024) return `${(bytes / 1024).toFixed(1)} KiB`;
  if (bytes < 1024 ** 3) return `${(bytes / 1024 ** 2).toFixed(1)} MiB`;
  return `${(bytes / 1024 ** 3).toFixed(2)} GiB`;
}

export function formatRate(perSecond: number): string {
  if (!Number.isFinite(perSecond)) return '-';
  if (perSecond >= 1e6) return `${(perSecond / 1e6).toFixed(2)}M`;
  if (perSecond >= 1e3) return `${(perSecond / 1e3).toFixed(1)}k`;
  return perSecond.toFixed(0);
}

export function createProgress(label: string, totalBytes: number, output: ProgressOutput, enabled = true, options: ProgressOptions = {}): Progress {
  if (!enabled || totalBytes < (options.minTotal ?? PROGRESS_MIN_BYTES)) return NO_PROGRESS;
  const formatAmount = options.formatAmount ?? formatBytes;
  const clock = options.clockMs;
  const began = clock?.() ?? 0;
  let events = 0;
  const rate = (): string => (clock === undefined ? '' : ` | ${formatRate(events / Math.max(0.001, (clock() - began) / 1000))} events/s`);
  let read = 0;
  if (output.isTTY === true) {
    const bar = new cliProgress.SingleBar(
      {
        // cli-progress writes to any stream with write(); this one is the caller's stderr.
        stream: output as unknown as NodeJS.WritableStream,
        format: `${label} |{bar}| {percentage}% | {done} of {size}{rate} | eta {eta_formatted}`,
        hideCursor: true,
        clearOnComplete: false,
      },
      cliProgress.Presets.shades_classic,
    );
    const size = formatAmount(totalBytes);
    bar.start(totalBytes, 0, { done: formatAmount(0), size, rate: rate() });
    return {
      add: (bytes) => {
        read += bytes;
        bar.update(Math.min(read, totalBytes), { done: formatAmount(read), size, rate: rate() });
      },
      count: (n) => {
        events += n;
      },
      stop: () => bar.stop(),
    };
  }
  let tenthsShown = 0;
  return {
    add: (bytes) => {
      read += bytes;
      const tenths = Math.min(10, Math.floor((read / totalBytes) * 10));
      if (tenths > tenthsShown) {
        tenthsShown = tenths;
        output.write(`${label}: ${tenths * 10}% (${formatAmount(read)} of ${formatAmount(totalBytes)}${rate().replace(' | ', ', ')})\n`);
      }
    },
    count: (n) => {
      events += n;
    },
    stop: () => {},
  };
}
