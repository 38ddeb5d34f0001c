import { describe, expect, it } from 'vitest';
import { skipBom, splitLines } from '../../../src/sources/index.js';
import type { RawLine } from '../../../src/sources/index.js';

async function* chunked(text: string | Uint8Array, size: number): AsyncGenerator<Uint8Array> {
  const bytes = typeof text === 'string' ? Buffer.from(text) : text;
  for (let i = 0; i < bytes.length; i += size) yield bytes.subarray(i, i + size);
}

async function lines(text: string | Uint8Array, size: number, maxBytes = 1000): Promise<Array<[number, string] | [number, { skipped: number }]>> {
  const out: Array<[number, string] | [number, { skipped: number }]> = [];
  for await (const raw of splitLines(skipBom(chunked(text, size)), maxBytes) as AsyncGenerator<RawLine>) {
    out.push(raw.bytes === undefined ? [raw.line, { skipped: raw.skippedBytes }] : [raw.line, Buffer.from(raw.bytes).toString()]);
  }
  return out;
}

describe('splitLines', () => {
  const text = '{"a":1}\r\n\n   \n{"b":2}\n{"c":3}';

  it.each([1, 2, 3, 7, 1024])('gives the same lines whatever the chunk size (%i)', async (size) => {
    // Line 2 is empty and line 3 blank: not events, but still counted in the numbering.
    expect(await lines(text, size)).toEqual([
      [1, '{"a":1}'],
      [4, '{"b":2}'],
      [5, '{"c":3}'],
    ]);
  });

  it('drops a byte-order mark, even one split across chunks', async () => {
    const withBom = Buffer.concat([Buffer.from([0xef, 0xbb, 0xbf]), Buffer.from('{"a":1}\n')]);
    expect(await lines(withBom, 1)).toEqual([[1, '{"a":1}']]);
    expect(await lines(withBom, 2)).toEqual([[1, '{"a":1}']]);
  });

  it('skips a line over the limit without collecting it, and carries on', async () => {
    const long = 'x'.repeat(50);
    expect(await lines(`ok\n${long}\nfine\n`, 4, 20)).toEqual([
      [1, 'ok'],
      [2, { skipped: 50 }],
      [3, 'fine'],
    ]);
  });

  it('takes a line of exactly the limit, with or without \\r', async () => {
    const exact = 'y'.repeat(20);
    expect(await lines(`${exact}\r\n${exact}\n`, 3, 20)).toEqual([
      [1, exact],
      [2, exact],
    ]);
  });
});
