/**
 * The references the watcher compares with, as one immutable value: which file loaded which model
 * version, when, and how each file's latest read went. A reload builds a new index from the old one and
 * the files' fresh reads (nextIndex, pure) and the caller swaps one pointer, so a scrape or an API answer,
 * which reads the index once, sees the old references or the new ones, never a mix.
 *
 * The rules of a reload, per configured file:
 * - a read that fails (missing, not JSON, not `headroom-reference/1`, invalid, of another model) keeps
 *   what that file loaded before, is reported once with the file and the field, and is counted;
 * - a read of the same model version replaces it (or keeps it, with its load time, when nothing changed);
 * - a read of another version adds that version and keeps the previous one: a reference only ever
 *   applies to series of its own version, so the old one is still right for events of the old version
 *   (a rollout sends both for a while), and dropping it would silently end their comparisons. It is
 *   shown as `replaced` and goes at the next restart, which loads only what the files hold then.
 */
import { ANY_MODEL } from '../config/index.js';
import { HeadroomError, isHeadroomError } from '../errors.js';
import type { LoadedReference, ReferenceSegment } from '../reference/index.js';
import type { ReferenceFileState, ReferenceOrigin, ReferenceReport } from '../serve/index.js';

/** One configured reference file. */
export interface ReferenceFileSlot {
  /** `models[].name` it is configured for. */
  readonly model: string;
  readonly path: string;
}

/** The outcome of reading one file, in the order of the slots. */
export type ReferenceRead = { readonly ok: true; readonly reference: LoadedReference } | { readonly ok: false; readonly error: unknown };

export interface ReferenceFailure {
  readonly model: string;
  readonly path: string;
  /** The field the problem is in (`model`, `segments.all.n`, ...); empty when the file as a whole is at fault. */
  readonly field: string;
  /** Its message names the file and the field. */
  readonly error: HeadroomError;
}

export interface ReferenceChange {
  readonly model: string;
  readonly version: string;
  readonly path: string;
  /** `added`: a version not loaded before; `updated`: new contents for a loaded version; `replaced`: kept for its own series, the file now holds another version. */
  readonly change: 'added' | 'updated' | 'replaced';
  readonly createdAt: string;
  /** For `updated`, the createdAt it had. */
  readonly previousCreatedAt?: string;
}

interface Entry {
  readonly reference: LoadedReference;
  /** Its contents as JSON text: how a reload tells "unchanged" from "updated". */
  readonly text: string;
  readonly loadedAtMs: number;
  /** The slot that loaded it. */
  readonly slot: number;
}

interface SlotState extends ReferenceFileSlot {
  /** Key of the version this file held at its last good read; undefined before one. */
  readonly key: string | undefined;
  readonly reloadErrors: number;
  readonly failure: ReferenceFailure | null;
}

function keyOf(model: string, version: string): string {
  return `${model}\u0000${version}`;
}

export class ReferenceIndex {
  private constructor(
    private readonly entries: ReadonlyMap<string, Entry>,
    private readonly slots: readonly SlotState[],
  ) {}

  /** The files of the configuration, none read yet. */
  static configured(files: readonly ReferenceFileSlot[]): ReferenceIndex {
    return new ReferenceIndex(new Map(), files.map((f) => ({ model: f.model, path: f.path, key: undefined, reloadErrors: 0, failure: null })));
  }

  /** The series' own segment of the reference, else the version's `all`; undefined when the version has no reference. */
  segmentFor(model: string, version: string, segment: string): ReferenceSegment | undefined {
    return this.entries.get(keyOf(model, version))?.reference.segmentFor(segment);
  }

  origin(model: string, version: string): ReferenceOrigin | undefined {
    const key = keyOf(model, version);
    const entry = this.entries.get(key);
    return entry === undefined ? undefined : this.originOf(key, entry);
  }

  get size(): number {
    return this.entries.size;
  }

  report(): ReferenceReport {
    return {
      loaded: [...this.entries].map(([key, entry]) => this.originOf(key, entry)),
      files: this.slots.map((s) => ({ model: s.model, path: s.path, reloadErrors: s.reloadErrors, failing: s.failure !== null })),
    };
  }

  private originOf(key: string, entry: Entry): ReferenceOrigin {
    const slot = this.slots[entry.slot] as SlotState;
    const file: ReferenceFileState = slot.key !== key ? 'replaced' : slot.failure !== null ? 'reload-failed' : 'current';
    const { model, version, file: json } = entry.reference;
    return { model, version, createdAt: json.createdAt, loadedAtMs: entry.loadedAtMs, file };
  }

  /**
   * The index after the files were read again (`reads[i]` for the i-th configured file), the changes
   * worth a log line, and the files whose read failed. Pure: the caller reads the files and swaps.
   */
  next(reads: readonly ReferenceRead[], nowMs: number): { index: ReferenceIndex; changes: ReferenceChange[]; failures: ReferenceFailure[] } {
    if (reads.length !== this.slots.length) throw new RangeError(`expected ${this.slots.length} reads, got ${reads.length}`);
    const entries = new Map(this.entries);
    const changes: ReferenceChange[] = [];
    const failures: ReferenceFailure[] = [];
    const slots = this.slots.map((slot, i): SlotState => {
      const read = reads[i] as ReferenceRead;
      const failure = read.ok ? modelMismatch(slot, read.reference) : describeFailure(slot, read.error);
      if (failure !== null || !read.ok) {
        failures.push(failure as ReferenceFailure);
        return { ...slot, reloadErrors: slot.reloadErrors + 1, failure };
      }
      const reference = read.reference;
      const key = keyOf(reference.model, reference.version);
      const text = JSON.stringify(reference.file);
      const before = entries.get(key);
      if (before?.text !== text) {
        entries.set(key, { reference, text, loadedAtMs: nowMs, slot: i });
        changes.push({
          model: reference.model,
          version: reference.version,
          path: slot.path,
          change: before === undefined ? 'added' : 'updated',
          createdAt: reference.file.createdAt,
          ...(before === undefined ? {} : { previousCreatedAt: before.reference.file.createdAt }),
        });
      } else if (before.slot !== i) {
        entries.set(key, { ...before, slot: i });
      }
      if (slot.key !== undefined && slot.key !== key) {
        const old = entries.get(slot.key);
        if (old !== undefined && old.slot === i) {
          changes.push({ model: old.reference.model, version: old.reference.version, path: slot.path, change: 'replaced', createdAt: old.reference.file.createdAt });
        }
      }
      return { ...slot, key, failure: null };
    });
    return { index: new ReferenceIndex(entries, slots), changes, failures };
  }
}

/** A file configured for model A that describes model B would leave A without a reference: refused, as any other bad read. */
function modelMismatch(slot: ReferenceFileSlot, reference: LoadedReference): ReferenceFailure | null {
  if (slot.model === ANY_MODEL || reference.model === slot.model) return null;
  const error = new HeadroomError(
    'HR_ERR_REFERENCE_INVALID',
    `${slot.path}: model: is ${JSON.stringify(reference.model)}, but the file is configured for model ${JSON.stringify(slot.model)}; point that model's reference at its own file`,
    { context: { source: slot.path, field: 'model' } },
  );
  return { model: slot.model, path: slot.path, field: 'model', error };
}

function describeFailure(slot: ReferenceFileSlot, cause: unknown): ReferenceFailure {
  const error = isHeadroomError(cause)
    ? cause
    : new HeadroomError('HR_ERR_INPUT_UNREADABLE', `reference file ${slot.path}: ${cause instanceof Error ? cause.message : String(cause)}`, { cause, context: { path: slot.path } });
  const field = typeof error.context.field === 'string' ? error.context.field : '';
  return { model: slot.model, path: slot.path, field, error };
}
