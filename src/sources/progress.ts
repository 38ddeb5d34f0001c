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
  stop(): void;
}

/** Below this, no progress is shown. */
export const PROGRESS_MIN_BYTES = 16 * 1024 * 1024;

const NO_PROGRESS: Progress = { add: () => {}, stop: () => {} };

export function formatBytes(bytes: number): string {
  if (bytes < 1024) return `${bytes} B`;
  if (bytes < 1024 * 1024) return `${(bytes / 1024).toFixed(1)} KiB`;
  if (bytes < 1024 ** 3) return `${(bytes / 1024 ** 2).toFixed(1)} MiB`;
  return `${(bytes / 1024 ** 3).toFixed(2)} GiB`;
}

export function createProgress(label: string, totalBytes: number, output: ProgressOutput, enabled = true): Progress {
  if (!enabled || totalBytes < PROGRESS_MIN_BYTES) return NO_PROGRESS;
  let read = 0;
  if (output.isTTY === true) {
    const bar = new cliProgress.SingleBar(
      {
        // cli-progress writes to any stream with write(); this one is the caller's stderr.
        stream: output as unknown as NodeJS.WritableStream,
        format: `${label} |{bar}| {percentage}% | {done} of {size} | eta {eta_formatted}`,
        hideCursor: true,
        clearOnComplete: false,
      },
      cliProgress.Presets.shades_classic,
    );
    const size = formatBytes(totalBytes);
    bar.start(totalBytes, 0, { done: formatBytes(0), size });
    return {
      add: (bytes) => {
        read += bytes;
        bar.update(Math.min(read, totalBytes), { done: formatBytes(read), size });
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
        output.write(`${label}: ${tenths * 10}% (${formatBytes(read)} of ${formatBytes(totalBytes)})\n`);
      }
    },
    stop: () => {},
  };
}
