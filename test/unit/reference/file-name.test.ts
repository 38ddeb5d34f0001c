import { describe, expect, it } from 'vitest';
import { referenceFileName } from '../../../src/reference/index.js';

describe('referenceFileName', () => {
  it('keeps plain names readable', () => {
    expect(referenceFileName('parcel-damage', '2026.11.3')).toBe('parcel-damage@2026.11.3.json');
  });

  it('encodes separators, a leading dot and the @ that would make the split ambiguous', () => {
    expect(referenceFileName('team/parcel', '../v1')).toBe('team%2Fparcel@%2E.%2Fv1.json');
    expect(referenceFileName('a@b', 'c')).toBe('a%40b@c.json');
    expect(referenceFileName('a', 'b@c')).toBe('a@b%40c.json');
    expect(referenceFileName('Paket schäden', 'v 1')).toBe('Paket%20sch%C3%A4den@v%201.json');
  });

  it('gives different model versions different names', () => {
    const pairs: [string, string][] = [['a_b', 'c'], ['a/b', 'c'], ['a%2Fb', 'c'], ['a', 'b_c'], ['x'.repeat(200), '1'], ['x'.repeat(199) + 'y', '1']];
    const names = pairs.map(([m, v]) => referenceFileName(m, v));
    expect(new Set(names).size).toBe(pairs.length);
    for (const name of names) expect(Buffer.byteLength(name)).toBeLessThanOrEqual(255);
  });
});
