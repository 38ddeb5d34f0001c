import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { ERROR_CODES, HeadroomError, exitCodeOf, httpStatusOf } from '../../src/errors.js';

const guide = readFileSync(new URL('../../DEVELOPERS.md', import.meta.url), 'utf8');
const documented = new Set([...guide.matchAll(/^\| `(HR_ERR_[A-Z_]+)` \|/gm)].map((m) => m[1]));

describe('error codes', () => {
  it('every code in src/errors.ts has a row in DEVELOPERS.md, and every row names a real code', () => {
    const codes = Object.keys(ERROR_CODES);
    expect(codes.filter((code) => !documented.has(code))).toEqual([]);
    expect([...documented].filter((code) => !codes.includes(code as string))).toEqual([]);
  });

  it('codes follow HR_ERR_<AREA>_<PROBLEM>', () => {
    for (const code of Object.keys(ERROR_CODES)) expect(code).toMatch(/^HR_ERR_[A-Z]+_[A-Z_]+$/);
  });

  it('an error carries its code, context and cause, and maps to its HTTP status and exit code', () => {
    const cause = new Error('disk full');
    const error = new HeadroomError('HR_ERR_REFERENCE_INVALID', 'ref.json: n: expected number', { cause, context: { file: 'ref.json' } });
    expect(error.code).toBe('HR_ERR_REFERENCE_INVALID');
    expect(error.message).toContain('ref.json: n: expected number');
    expect(error.cause).toBe(cause);
    expect(error.context).toEqual({ file: 'ref.json' });
    expect(httpStatusOf(error)).toBe(ERROR_CODES.HR_ERR_REFERENCE_INVALID.httpStatus);
    expect(exitCodeOf(error)).toBe(ERROR_CODES.HR_ERR_REFERENCE_INVALID.exitCode);
    expect(exitCodeOf(new Error('plain'))).toBe(1);
    expect(httpStatusOf('not an error')).toBe(500);
  });
});
