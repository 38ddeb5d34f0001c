/**
 * Durations in the configuration are strings with a unit. A bare number is refused: `interval: 5000`
 * reads as milliseconds to one person and seconds to the next, and the mistake would go unnoticed.
 */

const UNIT_MS = { ms: 1, s: 1_000, m: 60_000, h: 3_600_000, d: 86_400_000 } as const;
type Unit = keyof typeof UNIT_MS;

const DURATION = /^(\d+(?:\.\d+)?)\s*(ms|s|m|h|d)$/;

export type DurationResult = { readonly ok: true; readonly ms: number } | { readonly ok: false; readonly detail: string };

const EXAMPLE = 'e.g. "500ms", "5s", "2m", "1h", "1d"';

export function parseDuration(value: unknown): DurationResult {
  if (typeof value === 'number') {
    return { ok: false, detail: `must be a duration with a unit, ${EXAMPLE}; got the bare number ${value} (write "${value}ms" or "${value}s")` };
  }
  if (typeof value !== 'string') return { ok: false, detail: `must be a duration with a unit, ${EXAMPLE}; got ${value === null ? 'null' : typeof value}` };
  const match = DURATION.exec(value.trim());
  if (match === null) return { ok: false, detail: `must be a duration with a unit, ${EXAMPLE}; got ${JSON.stringify(value)}` };
  const ms = Number(match[1]) * UNIT_MS[match[2] as Unit];
  // Buckets and views are whole milliseconds; 1.0005s would be silently cut otherwise.
  if (!Number.isSafeInteger(ms)) return { ok: false, detail: `must come to a whole number of milliseconds, got ${JSON.stringify(value)}` };
  if (ms === 0) return { ok: false, detail: `must be longer than zero, got ${JSON.stringify(value)}` };
  return { ok: true, ms };
}

/** The shortest exact spelling: 90 000 ms is "90s", 5 400 000 ms is "90m". */
export function formatDuration(ms: number): string {
  for (const unit of ['d', 'h', 'm', 's'] as const) {
    if (ms >= UNIT_MS[unit] && ms % UNIT_MS[unit] === 0) return `${ms / UNIT_MS[unit]}${unit}`;
  }
  return `${ms}ms`;
}
