/** Notices built the way the watcher will build them: real rules, real transitions from the lifecycle. */
import { pino, type Logger } from 'pino';
import { parseAlertsSection, transitionId } from '../../../src/alerts/index.js';
import type { AlertPhase, AlertRule, AlertTransition, SeriesRef } from '../../../src/alerts/index.js';
import { noticeOf, type AlertNotice } from '../../../src/notify/index.js';

export const { rules: RULES } = parseAlertsSection({
  rules: [
    { name: 'low-margin-rise', kind: 'shareRise', model: 'parcel-damage', threshold: 0.1, window: '1h' },
    { name: 'early', kind: 'earlyWarning', threshold: 0.1, segmentKey: 'line' },
    { name: 'psi', kind: 'drift', statistic: 'psi' },
  ],
});

export function rule(name: string): AlertRule {
  const r = RULES.find((x) => x.name === name);
  if (r === undefined) throw new Error(`no rule ${name}`);
  return r;
}

export const SERIES: SeriesRef = { model: 'parcel-damage', version: '2026.11.3', segment: 'all' };
const CYCLE: readonly AlertPhase[] = ['calm', 'brewing', 'firing', 'easing', 'resting', 'calm'];

/** Transition number `seq` of the lifecycle's usual cycle for `ruleName` on `series`. */
export function transition(seq: number, ruleName = 'low-margin-rise', series: SeriesRef = SERIES, value: number | null = 0.081): AlertTransition {
  const from = CYCLE[(seq - 1) % 5] as AlertPhase;
  const to = CYCLE[((seq - 1) % 5) + 1] as AlertPhase;
  return { id: transitionId(ruleName, series, seq, to), rule: ruleName, series, seq, from, to, at: Date.UTC(2026, 11, 1, 10, 0) + seq * 60_000, value, threshold: 0.075 };
}

export function notice(seq: number, ruleName = 'low-margin-rise', series: SeriesRef = SERIES, value: number | null = 0.081): AlertNotice {
  return noticeOf(transition(seq, ruleName, series, value), rule(ruleName), {
    reading: { verdict: 'above', value, fireLevel: 0.075, clearLevel: 0.0625 },
    linkBase: 'https://headroom.example',
  });
}

/** A pino logger writing into `lines` at every level, so a test can read all it said. */
export function capturedLogger(): { logger: Logger; lines: Record<string, unknown>[]; raw: string[] } {
  const lines: Record<string, unknown>[] = [];
  const raw: string[] = [];
  const logger = pino({ level: 'trace' }, {
    write: (line: string) => {
      raw.push(line);
      lines.push(JSON.parse(line) as Record<string, unknown>);
    },
  });
  return { logger, lines, raw };
}

export const sleep = (ms: number): Promise<void> => new Promise((resolve) => setTimeout(resolve, ms));

export async function until(what: string, check: () => boolean, timeoutMs = 10_000): Promise<void> {
  const deadline = performance.now() + timeoutMs;
  while (performance.now() < deadline) {
    if (check()) return;
    await sleep(5);
  }
  throw new Error(`timed out after ${timeoutMs} ms waiting for ${what}`);
}
