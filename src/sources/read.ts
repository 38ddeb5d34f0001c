/**
 * Scored events from files, streamed: one chunk, one line (or CSV row) at a time, whatever the file
 * size. Each line becomes a decode result; a bad line is a rejection for the caller to count, never an
 * exception. Only the file as a whole failing (unreadable, gzip data cut short) throws, naming the file
 * and the last line reached, since events after that point are missing and the caller must know.
 */
import { createReadStream } from 'node:fs';
import { pipeline } from 'node:stream';
import { createGunzip } from 'node:zlib';
import { HeadroomError, isHeadroomError } from '../errors.js';
import { decodeScoredEvent, DEFAULT_DECODE_LIMITS, rejection, validateScoredEvent } from '../events/index.js';
import type { DecodeLimits, DecodeResult, ScoredEvent } from '../events/index.js';
import { csvLayout, csvRowToWire } from './csv-events.js';
import type { CsvLayout } from './csv-events.js';
import { CsvRecordSplitter } from './csv-records.js';
import type { CsvRecord } from './csv-records.js';
import type { InputFile } from './inputs.js';
import { skipBom, splitLines } from './lines.js';
import { sourceRejection } from './rejections.js';
import type { SourceRejection } from './rejections.js';

export interface SourceItem {
  readonly file: string;
  /** 1-based line of the file (of the decompressed text for .gz); for CSV, the line the row starts on. */
  readonly line: number;
  readonly result: DecodeResult<ScoredEvent> | SourceRejection;
}

export interface ReadOptions {
  readonly limits?: DecodeLimits;
  /**
   * The time of an event that has none, per file. A Kafka message has its own timestamp to fall back on;
   * a file line has none, so the caller decides (the reference command uses the file's modification time).
   */
  readonly fallbackTimeMs?: (file: InputFile) => number | undefined;
  /** Bytes read from disk (compressed bytes for .gz), reported as they are read: for progress. */
  readonly onBytes?: (bytes: number) => void;
}

const CHUNK_BYTES = 256 * 1024;

function fileChunks(file: InputFile, onBytes: (bytes: number) => void): AsyncIterable<Uint8Array> {
  const raw = createReadStream(file.path, { highWaterMark: CHUNK_BYTES });
  const counted = async function* (source: AsyncIterable<Buffer>): AsyncGenerator<Buffer> {
    for await (const chunk of source) {
      onBytes(chunk.length);
      yield chunk;
    }
  };
  if (!file.gzip) return counted(raw);
  const gunzip = createGunzip({ chunkSize: CHUNK_BYTES });
  // pipeline destroys every stage on a failure, so an error from any of them reaches the loop reading
  // gunzip; the callback only keeps the failure from also surfacing as an unhandled one.
  pipeline(raw, counted, gunzip, () => {});
  return gunzip;
}

function fileFailure(file: InputFile, lastLine: number, error: unknown): HeadroomError {
  const code = (error as NodeJS.ErrnoException | undefined)?.code;
  const context = { file: file.path, line: lastLine, code };
  const after = lastLine === 0 ? 'before its first line' : `after line ${lastLine}`;
  if (code === 'Z_BUF_ERROR') {
    return new HeadroomError('HR_ERR_INPUT_TRUNCATED', `${file.path}: the gzip data ends early, ${after}; the file looks cut short`, { cause: error, context });
  }
  if (typeof code === 'string' && code.startsWith('Z_')) {
    return new HeadroomError('HR_ERR_INPUT_UNREADABLE', `${file.path}: not valid gzip data (${String(error)}), ${after}`, { cause: error, context });
  }
  return new HeadroomError('HR_ERR_INPUT_UNREADABLE', `${file.path}: ${error instanceof Error ? error.message : String(error)}, ${after}`, { cause: error, context });
}

async function* jsonlItems(file: InputFile, chunks: AsyncIterable<Uint8Array>, limits: DecodeLimits, fallback: number | undefined, at: { line: number }): AsyncGenerator<SourceItem> {
  for await (const raw of splitLines(skipBom(chunks), limits.maxBytes)) {
    at.line = raw.line;
    const result =
      raw.bytes === undefined
        ? rejection('too_large', '', `line is at least ${raw.skippedBytes} bytes, the limit is ${limits.maxBytes}`)
        : decodeScoredEvent(raw.bytes, limits, fallback);
    yield { file: file.path, line: raw.line, result };
  }
}

async function* csvItems(file: InputFile, chunks: AsyncIterable<Uint8Array>, limits: DecodeLimits, fallback: number | undefined, at: { line: number }): AsyncGenerator<SourceItem> {
  const splitter = new CsvRecordSplitter(limits.maxBytes);
  let layout: CsvLayout | undefined;
  function* handle(records: readonly CsvRecord[]): Generator<SourceItem> {
    for (const record of records) {
      at.line = record.line;
      if (layout === undefined) {
        if (record.rejection !== undefined) {
          throw new HeadroomError('HR_ERR_INPUT_UNREADABLE', `${file.path}: CSV header on line ${record.line}: ${record.rejection.detail}`, {
            context: { file: file.path, line: record.line },
          });
        }
        layout = csvLayout(record.fields, file.path);
        continue;
      }
      let result: SourceItem['result'];
      if (record.rejection !== undefined) result = record.rejection;
      else if (record.fields.length !== layout.width) {
        result = sourceRejection('csv_field_count', '', `row has ${record.fields.length} fields, the header has ${layout.width}`);
      } else result = validateScoredEvent(csvRowToWire(layout, record.fields), limits, fallback);
      yield { file: file.path, line: record.line, result };
    }
  }
  for await (const chunk of skipBom(chunks)) yield* handle(splitter.push(chunk));
  yield* handle(splitter.end());
}

/** Every line of every file, in order. Stopping early (break) closes the open file. */
export async function* readScoredEvents(files: readonly InputFile[], options: ReadOptions = {}): AsyncGenerator<SourceItem> {
  const limits = options.limits ?? DEFAULT_DECODE_LIMITS;
  const onBytes = options.onBytes ?? (() => {});
  for (const file of files) {
    const at = { line: 0 };
    const fallback = options.fallbackTimeMs?.(file);
    const chunks = fileChunks(file, onBytes);
    const items = file.format === 'csv' ? csvItems(file, chunks, limits, fallback, at) : jsonlItems(file, chunks, limits, fallback, at);
    try {
      yield* items;
    } catch (error) {
      if (isHeadroomError(error)) throw error;
      throw fileFailure(file, at.line, error);
    }
  }
}
