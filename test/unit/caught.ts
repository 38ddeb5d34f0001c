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
