/**
 * The windows of a replay: fixed event-time windows of one length, aligned to the Unix epoch (a `1h`
 * window runs from hh:00:00.000 to the next hh:00:00.000 UTC, a `1d` window from midnight UTC), or
 * `total`, one window over everything replayed. Epoch alignment makes the windows of two replays of
 * overlapping ranges line up, so their figures for the same window can be compared or backfilled twice.
 */
import { formatDuration, parseDuration } from '../config/durations.js';
import { HeadroomError } from '../errors.js';

export interface ReplayWindow {
  /** As the user wrote it, normalised (`1h`, `15m`, `total`); the `window` label of the backfilled metrics. */
  readonly name: string;
  /** null for `total`. */
  readonly lengthMs: number | null;
}

export const TOTAL_WINDOW: ReplayWindow = Object.freeze({ name: 'total', lengthMs: null });

/** Shorter windows hold too few events for a comparison to mean much, and would flood the report. */
export const MIN_WINDOW_MS = 60_000;
/** Longer ones would need more coarse buckets than a series may hold (src/sketch/window-config.ts). */
export const MAX_WINDOW_MS = 366 * 86_400_000;

function usage(detail: string, value: unknown): HeadroomError {
  return new HeadroomError('HR_ERR_CLI_USAGE', `--window: ${detail}`, { context: { option: '--window', value } });
}

export function parseReplayWindow(text: string): ReplayWindow {
  if (text.trim() === 'total') return TOTAL_WINDOW;
  const parsed = parseDuration(text);
  if (!parsed.ok) throw usage(`${parsed.detail}, or "total"`, text);
  if (parsed.ms < MIN_WINDOW_MS || parsed.ms > MAX_WINDOW_MS) throw usage(`${JSON.stringify(text)} must be between 1m and 366d, or "total"`, text);
  if (parsed.ms % MIN_WINDOW_MS !== 0) throw usage(`${JSON.stringify(text)} must be a whole number of minutes (the buckets are 1 minute wide)`, text);
  return Object.freeze({ name: formatDuration(parsed.ms), lengthMs: parsed.ms });
}

/** Start of the window holding `timeMs`: epoch-aligned; 0 stands for the one `total` window. */
export function windowStartOf(window: ReplayWindow, timeMs: number): number {
  return window.lengthMs === null ? 0 : Math.floor(timeMs / window.lengthMs) * window.lengthMs;
}
