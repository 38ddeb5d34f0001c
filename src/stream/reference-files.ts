/**
 * The reference files of `headroom watch` on disk: read at start (a bad file stops the start), read again
 * on reload() (SIGHUP, or a change seen in a file's directory), and swapped in as one new ReferenceIndex
 * (reference-index.ts holds the rules). The directory is watched, not the file: an editor or a deploy that
 * writes a temp file and renames it over the old one replaces the inode, and a watch on the old inode
 * would go quiet after the first such replace.
 */
import { watch } from 'node:fs';
import type { FSWatcher } from 'node:fs';
import { stat } from 'node:fs/promises';
import { basename, dirname } from 'node:path';
import type { Logger } from 'pino';
import type { ModelConfig } from '../config/index.js';
import { loadReferenceFile } from '../sources/index.js';
import type { LoadedReference } from '../reference/index.js';
import { ReferenceIndex } from './reference-index.js';
import type { ReferenceChange, ReferenceFailure, ReferenceRead } from './reference-index.js';

export interface ReferenceFilesOptions {
  readonly models: readonly ModelConfig[];
  readonly nowMs: () => number;
  readonly log: Logger;
  /** Reads one file; default loadReferenceFile. */
  readonly read?: (path: string) => Promise<LoadedReference>;
}

export interface ReloadReport {
  readonly changes: readonly ReferenceChange[];
  readonly failures: readonly ReferenceFailure[];
}

export interface ReferenceFiles {
  /** The index in force; read it once per answer. */
  current(): ReferenceIndex;
  /** First read of every file; rejects with the first file's error (naming file and field). */
  load(): Promise<void>;
  /** Reads every file again and swaps the index; never rejects. Reloads run one at a time, in order. `why` goes to the log. */
  reload(why?: string): Promise<ReloadReport>;
  /** Reloads when a file's directory reports a change to it, `debounceMs` after the last event. */
  watchFiles(debounceMs: number): void;
  close(): void;
}

/** Identity and size of what a path points at now (symlinks followed); `missing` when nothing. */
async function fingerprint(path: string): Promise<string> {
  try {
    const s = await stat(path);
    return `${s.dev}:${s.ino}:${s.size}:${s.mtimeMs}`;
  } catch {
    return 'missing';
  }
}

function describeChange(c: ReferenceChange): string {
  const name = `${c.model} ${c.version}`;
  if (c.change === 'added') return `${name} loaded (created ${c.createdAt})`;
  if (c.change === 'updated') return `${name} updated (created ${c.previousCreatedAt ?? '?'} → ${c.createdAt})`;
  return `${name} kept for its own series; ${c.path} now holds another version`;
}

export function createReferenceFiles(options: ReferenceFilesOptions): ReferenceFiles {
  const { log, nowMs } = options;
  const read = options.read ?? loadReferenceFile;
  const slots = options.models.flatMap((m) => (m.reference === null ? [] : [{ model: m.name, path: m.reference }]));
  let index = ReferenceIndex.configured(slots);
  let chain: Promise<unknown> = Promise.resolve();
  const watchers: FSWatcher[] = [];
  let timer: NodeJS.Timeout | undefined;
  /** What each file pointed at when last read: a directory event that changed none of them is not a reload. */
  let seen: string[] = [];
  let closed = false;

  const readAll = async (): Promise<ReferenceRead[]> => {
    seen = await Promise.all(slots.map((s) => fingerprint(s.path)));
    return Promise.all(
      slots.map((s) =>
        read(s.path).then(
          (reference): ReferenceRead => ({ ok: true, reference }),
          (error: unknown): ReferenceRead => ({ ok: false, error }),
        ),
      ),
    );
  };

  async function load(): Promise<void> {
    for (const m of options.models) {
      if (m.reference === null) log.info({ model: m.name }, 'no reference configured: live metrics only, comparisons show "no reference"');
    }
    const { index: next, failures } = index.next(await readAll(), nowMs());
    const first = failures[0];
    if (first !== undefined) throw first.error;
    index = next;
    for (const { model, version, createdAt } of index.report().loaded) log.info({ model, version, createdAt }, 'reference loaded');
  }

  async function reloadNow(why: string): Promise<ReloadReport> {
    const reads = await readAll();
    const { index: next, changes, failures } = index.next(reads, nowMs());
    index = next; // the one swap: everything read and checked before it
    for (const f of failures) {
      log.error({ err: f.error, model: f.model, file: f.path, field: f.field, code: f.error.code }, `reference not reloaded; the previous one stays in force: ${f.error.message}`);
    }
    log.info({ why, changes: changes.map(describeChange), failed: failures.map((f) => f.path), references: index.size }, 'references reloaded');
    return { changes, failures };
  }

  function reload(why = 'reload'): Promise<ReloadReport> {
    const run = chain.then(
      () => reloadNow(why),
      () => reloadNow(why),
    );
    chain = run;
    return run;
  }

  async function onDirectoryEvent(): Promise<void> {
    const now = await Promise.all(slots.map((s) => fingerprint(s.path)));
    if (closed || now.every((f, i) => f === seen[i])) return;
    await reload('file change');
  }

  function watchFiles(debounceMs: number): void {
    const dirs = new Set(slots.map((s) => dirname(s.path)));
    for (const dir of dirs) {
      const names = new Set(slots.filter((s) => dirname(s.path) === dir).map((s) => basename(s.path)));
      try {
        const w = watch(dir, { persistent: false }, () => {
          // Any name: a file replaced through a symlink swap shows up as events on other names.
          clearTimeout(timer);
          timer = setTimeout(() => {
            onDirectoryEvent().catch((error: unknown) => log.error({ err: error }, 'reference reload after a file change failed'));
          }, debounceMs);
          timer.unref();
        });
        w.on('error', (error) => log.warn({ err: error, dir }, 'watching reference files stopped for this directory; SIGHUP still reloads them'));
        watchers.push(w);
        log.info({ dir, files: [...names] }, 'watching reference files for changes');
      } catch (error) {
        log.warn({ err: error, dir }, 'cannot watch this directory for reference changes; SIGHUP still reloads them');
      }
    }
  }

  function close(): void {
    closed = true;
    clearTimeout(timer);
    for (const w of watchers.splice(0)) w.close();
  }

  return { current: () => index, load, reload, watchFiles, close };
}
