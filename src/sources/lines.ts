/**
 * Byte chunks in, lines out, without ever holding more than one line (and one chunk) in memory. A line
 * longer than the decoder's byte limit is not collected at all: it is skipped to its end and reported
 * by length, so one runaway line cannot exhaust memory before the decoder gets to refuse it.
 */

export type RawLine =
  | { readonly line: number; readonly bytes: Uint8Array; readonly skippedBytes?: undefined }
  | { readonly line: number; readonly bytes?: undefined; readonly skippedBytes: number };

const LF = 0x0a;
const CR = 0x0d;

function isBlank(bytes: Uint8Array): boolean {
  for (const b of bytes) if (b !== 0x20 && b !== 0x09) return false;
  return true;
}

/**
 * Drops a UTF-8 byte-order mark at the start of the input: spreadsheet programs write one, and neither
 * JSON.parse nor a CSV header expects it.
 */
export async function* skipBom(chunks: AsyncIterable<Uint8Array>): AsyncGenerator<Uint8Array> {
  let head: Uint8Array | undefined = new Uint8Array(0);
  for await (const chunk of chunks) {
    if (head === undefined) {
      yield chunk;
      continue;
    }
    // Held until three bytes are in: a chunk boundary may fall inside the mark.
    head = head.length === 0 ? chunk : Buffer.concat([head, chunk]);
    if (head.length < 3) continue;
    yield head[0] === 0xef && head[1] === 0xbb && head[2] === 0xbf ? head.subarray(3) : head;
    head = undefined;
  }
  if (head !== undefined && head.length > 0) yield head;
}

/**
 * Lines numbered from 1, without their `\n` or `\r\n`. Blank lines are not events and are not yielded
 * (their numbers are still counted, so later line numbers match an editor's). A last line without a
 * final newline is yielded like any other.
 */
export async function* splitLines(chunks: AsyncIterable<Uint8Array>, maxBytes: number): AsyncGenerator<RawLine> {
  let parts: Uint8Array[] = [];
  let held = 0;
  let skipping = false;
  let lineNo = 1;

  function* finish(): Generator<RawLine> {
    const number = lineNo++;
    if (skipping) {
      yield { line: number, skippedBytes: held };
    } else {
      let bytes = parts.length === 1 ? (parts[0] as Uint8Array) : Buffer.concat(parts, held);
      if (bytes.length > 0 && bytes[bytes.length - 1] === CR) bytes = bytes.subarray(0, bytes.length - 1);
      if (!isBlank(bytes)) yield { line: number, bytes };
    }
    parts = [];
    held = 0;
    skipping = false;
  }

  for await (const chunk of chunks) {
    let from = 0;
    while (from <= chunk.length) {
      const at = chunk.indexOf(LF, from);
      const end = at < 0 ? chunk.length : at;
      const piece = chunk.subarray(from, end);
      held += piece.length;
      // +1 leaves room for the `\r` of a `\r\n` line exactly at the limit.
      if (held > maxBytes + 1) {
        skipping = true;
        parts = [];
      }
      if (!skipping && piece.length > 0) parts.push(piece);
      if (at < 0) break;
      yield* finish();
      from = at + 1;
    }
  }
  if (held > 0 || parts.length > 0) yield* finish();
}
