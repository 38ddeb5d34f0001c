/**
 * RFC 4180 records from byte chunks: fields separated by `,`, records by `\n` or `\r\n`; a field in
 * double quotes may hold commas, newlines and `""` for a quote. Parsed on bytes, not text: every byte
 * with structure here is ASCII, and UTF-8 never uses ASCII bytes inside a multi-byte character, so each
 * field is decoded on its own and a bad byte costs one row, not the rest of the file.
 *
 * Strict where leniency would guess: a quote inside an unquoted field, or text after a closing quote,
 * refuses the row (csv_bad_quote) rather than reading it some way the producer may not have meant.
 */
import { rejection } from '../events/index.js';
import type { LineRejection } from './rejections.js';
import { sourceRejection } from './rejections.js';

export type CsvRecord =
  | { readonly line: number; readonly fields: readonly string[]; readonly rejection?: undefined }
  | { readonly line: number; readonly fields?: undefined; readonly rejection: LineRejection };

const QUOTE = 0x22;
const COMMA = 0x2c;
const LF = 0x0a;
const CR = 0x0d;

const utf8 = new TextDecoder('utf-8', { fatal: true });

export class CsvRecordSplitter {
  private field: number[] = [];
  private fields: Uint8Array[] = [];
  private quoted = false;
  private inQuotes = false;
  /** Just read a quote inside a quoted field: either its end or the first half of `""`. */
  private quotePending = false;
  private problem: LineRejection | undefined;
  private recordBytes = 0;
  private skipping = false;
  private line = 1;
  private recordLine = 1;

  constructor(private readonly maxBytes: number) {}

  /** Records completed by this chunk; the rest is held for the next one. */
  push(chunk: Uint8Array): CsvRecord[] {
    const out: CsvRecord[] = [];
    for (let i = 0; i < chunk.length; i++) {
      const c = chunk[i] as number;
      if (this.skipping) {
        // An oversized record is dropped up to the next newline, quotes or not: the only way to resync.
        if (c === LF) {
          this.line++;
          this.reset();
        }
        continue;
      }
      if (++this.recordBytes > this.maxBytes + 1) {
        out.push({ line: this.recordLine, rejection: rejection('too_large', '', `CSV row is longer than ${this.maxBytes} bytes`) });
        this.skipping = true;
        if (c === LF) {
          this.line++;
          this.reset();
        }
        continue;
      }
      if (this.inQuotes) {
        if (this.quotePending) {
          this.quotePending = false;
          if (c === QUOTE) {
            this.field.push(QUOTE);
            continue;
          }
          this.inQuotes = false;
          // Falls through: c is the first byte after the closing quote.
        } else {
          if (c === QUOTE) this.quotePending = true;
          else {
            if (c === LF) this.line++;
            this.field.push(c);
          }
          continue;
        }
      }
      if (c === COMMA) this.endField();
      else if (c === LF) {
        this.line++;
        const record = this.endRecord();
        if (record !== undefined) out.push(record);
      } else if (c === QUOTE) {
        if (this.field.length === 0 && !this.quoted) {
          this.quoted = true;
          this.inQuotes = true;
        } else this.fail('a quote inside an unquoted field (quote the whole field and double the quote)');
      } else if (this.quoted) {
        // After a closing quote only `,` or the end of the record may follow; `\r` of `\r\n` is allowed.
        if (c !== CR) this.fail('text after the closing quote of a field');
      } else this.field.push(c);
    }
    return out;
  }

  /** The last record, if the input does not end with a newline; a quote still open is refused. */
  end(): CsvRecord[] {
    if (this.skipping) return [];
    if (this.inQuotes && !this.quotePending) {
      const line = this.recordLine;
      this.reset();
      return [{ line, rejection: sourceRejection('csv_unclosed_quote', '', `the quoted field opened on line ${line} never closes`) }];
    }
    this.inQuotes = false;
    const record = this.recordBytes > 0 ? this.endRecord() : undefined;
    return record === undefined ? [] : [record];
  }

  private fail(detail: string): void {
    this.problem ??= sourceRejection('csv_bad_quote', `column ${this.fields.length + 1}`, detail);
  }

  private endField(): void {
    this.fields.push(Uint8Array.from(this.field));
    this.field = [];
    this.quoted = false;
  }

  private endRecord(): CsvRecord | undefined {
    const wasQuoted = this.quoted;
    this.endField();
    // A `\r` ending an unquoted last field is the first half of a `\r\n` line end.
    const last = this.fields[this.fields.length - 1] as Uint8Array;
    if (!wasQuoted && last.length > 0 && last[last.length - 1] === CR) this.fields[this.fields.length - 1] = last.subarray(0, last.length - 1);
    const line = this.recordLine;
    const fields = this.fields;
    const problem = this.problem;
    this.reset();
    if (problem !== undefined) return { line, rejection: problem };
    // A blank line is no record.
    if (fields.length === 1 && (fields[0] as Uint8Array).length === 0 && !wasQuoted) return undefined;
    try {
      return { line, fields: fields.map((f) => utf8.decode(f)) };
    } catch {
      return { line, rejection: rejection('not_utf8', '', 'a CSV field is not valid UTF-8') };
    }
  }

  private reset(): void {
    this.field = [];
    this.fields = [];
    this.quoted = false;
    this.inQuotes = false;
    this.quotePending = false;
    this.problem = undefined;
    this.recordBytes = 0;
    this.skipping = false;
    this.recordLine = this.line;
  }
}
