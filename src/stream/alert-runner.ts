/**
 * The watcher's alert loop: every `alerts.evaluateEvery` the merged series go through evaluateAlerts
 * (src/alerts, pure); the book is saved, THEN the transitions are handed to the notifiers, so a crash in
 * between re-evaluates from the saved book and repeats transitions with the same ids (which a webhook
 * receiver deduplicates by its Idempotency-Key) rather than losing one.
 *
 * Where the book lives: `<checkpoint.dir>/<group>.alerts.json`, beside the partition checkpoints but
 * not inside them. An alert belongs to a series merged over every partition, and partitions move
 * between instances; see src/alerts/book.ts for the reasoning and the several-instance plan.
 */
import { mkdir, readFile } from 'node:fs/promises';
import { join } from 'node:path';
import type { Logger } from 'pino';
import { AlertBook, evaluateAlerts } from '../alerts/index.js';
import type { AlertRule, AlertSeries, AlertTransition, NamedView, Reading, ThresholdFor } from '../alerts/index.js';
import type { AlertReport } from '../serve/index.js';
import { HeadroomError } from '../errors.js';
import { writeTextAtomically } from '../files/atomic-write.js';
import { encodeName } from '../state/index.js';

/** Transitions kept for the API, newest last. */
const RECENT = 200;

/** `reading` is the alert's reading at the evaluation that made the transition. */
export type TransitionListener = (transition: AlertTransition, rule: AlertRule, reading: Reading | null) => void;

export interface AlertRunnerOptions {
  readonly rules: readonly AlertRule[];
  readonly views: readonly NamedView[];
  /** The merged series as they are now (called once per tick). */
  readonly series: () => Iterable<AlertSeries>;
  /** Where the book is saved; null keeps it in memory only (the embedded demo, which starts calm every run). */
  readonly dir: string | null;
  readonly group: string;
  readonly logger: Logger;
  readonly listeners: readonly TransitionListener[];
  /** How early-warning decision levels are found; default the book's own (cusumThreshold, seconds each). The demo passes levels it solved before its clock started. */
  readonly thresholdFor?: ThresholdFor;
}

export interface AlertRunner {
  /** Reads the saved book (none yet: every alert starts calm). A corrupt file stops the start. */
  load(): Promise<void>;
  /** One evaluation: evaluate, save, notify. Ticks never overlap (the caller's timer skips a busy tick). */
  tick(): Promise<readonly AlertTransition[]>;
  report(): AlertReport;
  /** null when the book is kept in memory only. */
  readonly path: string | null;
}

export function createAlertRunner(options: AlertRunnerOptions): AlertRunner {
  const { rules, views, logger } = options;
  const dir = options.dir;
  const path = dir === null ? null : join(dir, `${encodeName(options.group)}.alerts.json`);
  const byName = new Map(rules.map((r) => [r.name, r]));
  const bookOptions = options.thresholdFor === undefined ? {} : { thresholdFor: options.thresholdFor };
  let book = new AlertBook(rules, bookOptions);
  let saved = '';
  let temp = 0;
  const recent: AlertTransition[] = [];
  let failing = new Map<string, string>();

  async function load(): Promise<void> {
    if (path === null) return;
    let text: string;
    try {
      text = await readFile(path, 'utf8');
    } catch (error) {
      if ((error as NodeJS.ErrnoException).code === 'ENOENT') return;
      throw new HeadroomError('HR_ERR_CHECKPOINT_IO', `cannot read the alert state ${path}: ${(error as Error).message}`, { cause: error, context: { path } });
    }
    let json: unknown;
    try {
      json = JSON.parse(text);
    } catch (error) {
      throw new HeadroomError('HR_ERR_CHECKPOINT_CORRUPT', `${path}: not JSON (${(error as Error).message}); move it away to start every alert calm`, { cause: error, context: { path } });
    }
    try {
      const restored = AlertBook.fromState(rules, json, bookOptions);
      book = restored.book;
      saved = text;
      if (restored.dropped.length > 0) logger.info({ dropped: restored.dropped }, 'saved alerts of rules no longer configured were dropped');
      logger.info({ path, alerts: book.status().length }, 'alert state restored');
    } catch (error) {
      throw new HeadroomError('HR_ERR_CHECKPOINT_CORRUPT', `${path}: ${(error as Error).message}; move it away to start every alert calm`, { cause: error, context: { path } });
    }
  }

  async function save(): Promise<void> {
    const text = `${JSON.stringify(book.toState())}\n`;
    if (text === saved || dir === null || path === null) return;
    await mkdir(dir, { recursive: true });
    temp += 1;
    await writeTextAtomically(path, text, `${path}.tmp-${process.pid}-${temp}`);
    saved = text;
  }

  async function tick(): Promise<readonly AlertTransition[]> {
    const { transitions, failures } = evaluateAlerts(book, options.series(), views);
    // Logged when an alert starts failing or its reason changes, not at every tick.
    const failingNow = new Map<string, string>();
    for (const f of failures) {
      const key = `${f.rule}\u0000${f.series.model}\u0000${f.series.version}\u0000${f.series.segment}`;
      const message = f.error instanceof Error ? f.error.message : String(f.error);
      failingNow.set(key, message);
      if (failing.get(key) !== message) logger.error({ err: f.error, rule: f.rule, ...f.series }, 'alert not evaluated');
    }
    failing = failingNow;
    try {
      await save();
    } catch (error) {
      // Not notified yet, and the book in memory moved on: the next tick saves it and these are not repeated.
      logger.error({ err: error, path }, 'alert state not saved; notifying anyway');
    }
    for (const t of transitions) {
      recent.push(t);
      const rule = byName.get(t.rule) as AlertRule;
      for (const listener of options.listeners) {
        try {
          listener(t, rule, book.readingOf(t.rule, t.series));
        } catch (error) {
          logger.error({ err: error, rule: t.rule }, 'alert listener failed');
        }
      }
    }
    if (recent.length > RECENT) recent.splice(0, recent.length - RECENT);
    return transitions;
  }

  return { load, tick, report: () => ({ rules, alerts: book.status(), recent: [...recent] }), path };
}
