/**
 * CSV rows as scored events. Each row is rebuilt as the JSON wire object (DESIGN.md, "Wire format") and
 * handed to the same validator as a JSONL line, so there is one set of rules and one set of reasons.
 *
 * Layout: a header row, then one event per row; columns in any order.
 *     id, model, version        required
 *     score_kind                required: probability | logit | votes | classes | margin
 *     p | z | sum,total | margin    the score's numbers, by kind (margin fills score.value)
 *     class:<name>              one column per class of a `classes` score (empty cell: class absent)
 *     time                      optional: RFC 3339 with a zone, or epoch milliseconds (digits)
 *     label                     optional: 1/0, 1/-1, true/false, or a class name
 *     segment:<key>             optional: one column per segment key (empty cell: key absent)
 * An empty cell is an absent field. Number cells must be plain decimal numbers (`0.91`, `-2.3`, `1e-3`);
 * anything else (`0,91`, ` 0.9`, `NaN`) is passed on as text and refused as `wrong_type` on its field
 * (`score.p` for column p). Unknown or repeated columns make the whole file unreadable: a misspelt
 * `segmnet:line` silently ignored would build a reference without the segments it was meant to have.
 *
 *     id,model,version,time,score_kind,p,label,segment:line
 *     p-000123,parcel-damage,2026.11.3,2026-12-01T10:00:00.123Z,probability,0.91,1,2
 */
import { HeadroomError } from '../errors.js';

const NUMBER = /^[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?$/;
const EPOCH_MS = /^\d+(?:\.\d+)?$/;

const REQUIRED = ['id', 'model', 'version', 'score_kind'] as const;
const SCORE_NUMBERS: Readonly<Record<string, string>> = { p: 'p', z: 'z', sum: 'sum', total: 'total', margin: 'value' };
const PLAIN = new Set(['id', 'model', 'version', 'time', 'label', 'score_kind', ...Object.keys(SCORE_NUMBERS)]);

export const CSV_CLASS_PREFIX = 'class:';
export const CSV_SEGMENT_PREFIX = 'segment:';

/** A compiled header: which column fills which field. */
export interface CsvLayout {
  readonly width: number;
  readonly plain: ReadonlyMap<string, number>;
  readonly scoreNumbers: readonly (readonly [field: string, column: number])[];
  readonly classes: readonly (readonly [name: string, column: number])[];
  readonly segments: readonly (readonly [key: string, column: number])[];
}

function unreadable(file: string, detail: string, context: Record<string, unknown> = {}): HeadroomError {
  return new HeadroomError('HR_ERR_INPUT_UNREADABLE', `${file}: CSV header: ${detail}`, { context: { file, ...context } });
}

export function csvLayout(header: readonly string[], file: string): CsvLayout {
  const plain = new Map<string, number>();
  const scoreNumbers: [string, number][] = [];
  const classes: [string, number][] = [];
  const segments: [string, number][] = [];
  const seen = new Set<string>();
  header.forEach((name, column) => {
    const where = `column ${column + 1} ${JSON.stringify(name)}`;
    if (seen.has(name)) throw unreadable(file, `${where} appears twice`, { column: name });
    seen.add(name);
    if (name.startsWith(CSV_CLASS_PREFIX) || name.startsWith(CSV_SEGMENT_PREFIX)) {
      const isClass = name.startsWith(CSV_CLASS_PREFIX);
      const rest = name.slice((isClass ? CSV_CLASS_PREFIX : CSV_SEGMENT_PREFIX).length);
      if (rest === '') throw unreadable(file, `${where} needs a name after the colon`, { column: name });
      (isClass ? classes : segments).push([rest, column]);
    } else if (PLAIN.has(name)) {
      plain.set(name, column);
      const field = SCORE_NUMBERS[name];
      if (field !== undefined) scoreNumbers.push([field, column]);
    } else {
      throw unreadable(
        file,
        `${where} is not a known column; expected ${[...PLAIN].join(', ')}, ${CSV_CLASS_PREFIX}<name> or ${CSV_SEGMENT_PREFIX}<key>`,
        { column: name },
      );
    }
  });
  const missing = REQUIRED.filter((name) => !plain.has(name));
  if (missing.length > 0) throw unreadable(file, `lacks the column${missing.length > 1 ? 's' : ''} ${missing.join(', ')}`, { missing });
  return { width: header.length, plain, scoreNumbers, classes, segments };
}

function numberOrText(cell: string): number | string {
  return NUMBER.test(cell) ? Number(cell) : cell;
}

/** The wire object for one row; the row must have `layout.width` fields (the caller checks). */
export function csvRowToWire(layout: CsvLayout, row: readonly string[]): Record<string, unknown> {
  const cell = (name: string): string => {
    const column = layout.plain.get(name);
    return column === undefined ? '' : (row[column] as string);
  };
  const wire: Record<string, unknown> = {};
  for (const name of ['id', 'model', 'version'] as const) {
    const value = cell(name);
    if (value !== '') wire[name] = value;
  }
  const time = cell('time');
  if (time !== '') wire.time = EPOCH_MS.test(time) ? Number(time) : time;
  const score: Record<string, unknown> = {};
  const kind = cell('score_kind');
  if (kind !== '') score.kind = kind;
  for (const [field, column] of layout.scoreNumbers) {
    const value = row[column] as string;
    if (value !== '') score[field] = numberOrText(value);
  }
  if (layout.classes.length > 0) {
    // A null-prototype map: a class named `constructor` must be data, not a lookup on Object.prototype.
    const values: Record<string, unknown> = Object.create(null) as Record<string, unknown>;
    let any = false;
    for (const [name, column] of layout.classes) {
      const value = row[column] as string;
      if (value === '') continue;
      values[name] = numberOrText(value);
      any = true;
    }
    if (any) score.values = values;
  }
  wire.score = score;
  const label = cell('label');
  if (label !== '') wire.label = label;
  if (layout.segments.length > 0) {
    const segment: Record<string, string> = Object.create(null) as Record<string, string>;
    let any = false;
    for (const [key, column] of layout.segments) {
      const value = row[column] as string;
      if (value === '') continue;
      segment[key] = value;
      any = true;
    }
    if (any) wire.segment = segment;
  }
  return wire;
}
