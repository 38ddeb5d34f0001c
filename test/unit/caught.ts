import { isHeadroomError, type HeadroomError } from '../../src/errors.js';

/** The HeadroomError that `f` throws; anything else thrown is re-thrown, and not throwing fails. */
export function caught(f: () => unknown): HeadroomError {
  try {
    f();
  } catch (error) {
    if (isHeadroomError(error)) return error;
    throw error;
  }
  throw new Error('expected a HeadroomError, nothing was thrown');
}

export async function caughtAsync(f: () => Promise<unknown>): Promise<HeadroomError> {
  try {
    await f();
  } catch (error) {
    if (isHeadroomError(error)) return error;
    throw error;
  }
  throw new Error('expected a HeadroomError, nothing was thrown');
}

/** The code of the HeadroomError that `f` throws, a description of anything else, or undefined. */
export function codeOf(f: () => unknown): string | undefined {
  try {
    f();
  } catch (e) {
    return isHeadroomError(e) ? e.code : `not a HeadroomError: ${String(e)}`;
  }
  return undefined;
}
