import { describe, expect, it } from 'vitest';
import { validateScoredEvent } from '../../../src/events/index.js';
import { csvLayout, csvRowToWire, CsvRecordSplitter } from '../../../src/sources/index.js';
import type { CsvRecord } from '../../../src/sources/index.js';
import { caught } from '../reference/events.js';

function records(text: string, size = text.length, maxBytes = 1000): CsvRecord[] {
  const splitter = new CsvRecordSplitter(maxBytes);
  const bytes = Buffer.from(text);
  const out: CsvRecord[] = [];
  for (let i = 0; i < bytes.length; i += size) out.push(...splitter.push(bytes.subarray(i, i + size)));
  out.push(...splitter.end());
  return out;
}

const summary = (rs: CsvRecord[]) => rs.map((r) => (r.rejection === undefined ? [r.line, r.fields] : [r.line, r.rejection.reason]));

describe('CsvRecordSplitter', () => {
  const text = 'id,label\r\np-1,"says ""fragile"", twice"\n"p-2","two\nlines"\n\np-3,\n';

  it.each([1, 2, 5, 1000])('reads quoted commas, doubled quotes and newlines in quotes (chunks of %i)', (size) => {
    expect(summary(records(text, size))).toEqual([
      [1, ['id', 'label']],
      [2, ['p-1', 'says "fragile", twice']],
      [3, ['p-2', 'two\nlines']],
      // Line 4 of the file is the second half of row 3; line 5 is blank.
      [6, ['p-3', '']],
    ]);
  });

  it('takes a last row without a newline, and an empty quoted field', () => {
    expect(summary(records('a,b\n"",x'))).toEqual([
      [1, ['a', 'b']],
      [2, ['', 'x']],
    ]);
  });

  it('refuses a quote inside an unquoted field and text after a closing quote, then carries on', () => {
    expect(summary(records('a,b\n1,x"y\n"2"z,3\n4,5\n'))).toEqual([
      [1, ['a', 'b']],
      [2, 'csv_bad_quote'],
      [3, 'csv_bad_quote'],
      [4, ['4', '5']],
    ]);
  });

  it('refuses a quote left open at the end of the file', () => {
    const rs = records('a,b\n1,"never closed\n2,3\n');
    expect(summary(rs)).toEqual([
      [1, ['a', 'b']],
      [2, 'csv_unclosed_quote'],
    ]);
  });

  it('refuses an oversized row and resyncs at the next newline', () => {
    expect(summary(records(`a,b\n1,${'z'.repeat(40)}\n2,3\n`, 7, 16))).toEqual([
      [1, ['a', 'b']],
      [2, 'too_large'],
      [3, ['2', '3']],
    ]);
  });

  it('refuses bytes that are not UTF-8, for that row only', () => {
    const splitter = new CsvRecordSplitter(100);
    const rs = [...splitter.push(Buffer.from('a\n')), ...splitter.push(Buffer.from([0xc3, 0x28, 0x0a])), ...splitter.push(Buffer.from('ok\n'))];
    expect(summary(rs)).toEqual([
      [1, ['a']],
      [2, 'not_utf8'],
      [3, ['ok']],
    ]);
  });
});

describe('CSV header', () => {
  it('refuses an unknown column, naming it', () => {
    const error = caught(() => csvLayout(['id', 'model', 'version', 'score_kind', 'segmnet:line'], 'events.csv'));
    expect(error.code).toBe('HR_ERR_INPUT_UNREADABLE');
    expect(error.message).toContain('events.csv: CSV header: column 5 "segmnet:line" is not a known column');
  });

  it('refuses a repeated column and missing required ones', () => {
    expect(caught(() => csvLayout(['id', 'id', 'model', 'version', 'score_kind'], 'f.csv')).message).toContain('column 2 "id" appears twice');
    expect(caught(() => csvLayout(['id', 'p'], 'f.csv')).message).toContain('lacks the columns model, version, score_kind');
    expect(caught(() => csvLayout(['id', 'model', 'version', 'score_kind', 'class:'], 'f.csv')).message).toContain('needs a name');
  });
});

describe('CSV rows as wire events', () => {
  const header = ['id', 'model', 'version', 'time', 'score_kind', 'p', 'z', 'sum', 'total', 'margin', 'class:ok', 'class:dented', 'label', 'segment:line', 'segment:site'];
  const layout = csvLayout(header, 'f.csv');
  const row = (cells: Record<string, string>) => header.map((h) => cells[h] ?? '');
  const base = { id: 'p-7', model: 'parcel-damage', version: '2026.11.3' };

  it('builds a probability event with time, label and segments', () => {
    const wire = csvRowToWire(layout, row({ ...base, time: '2026-12-01T10:00:00.123Z', score_kind: 'probability', p: '0.91', label: '1', 'segment:line': '2' }));
    expect(wire).toEqual({ ...base, time: '2026-12-01T10:00:00.123Z', score: { kind: 'probability', p: 0.91 }, label: '1', segment: { line: '2' } });
    const decoded = validateScoredEvent(wire);
    expect(decoded.ok && decoded.event.timeMs).toBe(Date.UTC(2026, 11, 1, 10, 0, 0, 123));
  });

  it('reads digits-only time as epoch ms, and fills votes, margin and classes scores', () => {
    expect(csvRowToWire(layout, row({ ...base, time: '1764583200000', score_kind: 'votes', sum: '-1.5', total: '3' }))).toMatchObject({
      time: 1764583200000,
      score: { kind: 'votes', sum: -1.5, total: 3 },
    });
    expect(csvRowToWire(layout, row({ ...base, score_kind: 'margin', margin: '4.2e-1' })).score).toEqual({ kind: 'margin', value: 0.42 });
    const classes = csvRowToWire(layout, row({ ...base, score_kind: 'classes', 'class:ok': '0.75', 'class:dented': '.25', label: 'dented' }));
    expect(validateScoredEvent(classes, undefined, 0)).toMatchObject({ ok: true, event: { score: { kind: 'classes', values: { ok: 0.75, dented: 0.25 } }, label: 'dented' } });
  });

  it('leaves a number cell that is not a plain number as text, for the decoder to refuse on its field', () => {
    for (const p of ['0,91', ' 0.9', 'NaN', '0x1']) {
      expect(validateScoredEvent(csvRowToWire(layout, row({ ...base, time: '1', score_kind: 'probability', p })))).toMatchObject({
        ok: false,
        reason: 'wrong_type',
        field: 'score.p',
      });
    }
  });

  it('treats an empty cell as an absent field', () => {
    const wire = csvRowToWire(layout, row({ ...base, score_kind: 'logit', z: '0' }));
    expect(wire).toEqual({ ...base, score: { kind: 'logit', z: 0 } });
    expect(validateScoredEvent(csvRowToWire(layout, row({ ...base, score_kind: '' })), undefined, 0)).toMatchObject({ ok: false, field: 'score.kind' });
  });
});
