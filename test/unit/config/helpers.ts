import { isHeadroomError } from '../../../src/errors.js';
import type { HeadroomError } from '../../../src/errors.js';
import { parseConfig } from '../../../src/config/index.js';
import type { Env } from '../../../src/config/index.js';

export const MINIMAL = 'kafka:\n  brokers: ["127.0.0.1:9092"]\n  topics: [scored-events]\n';

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

/** The message lines of the error parseConfig throws for `text`. */
export function problemsOf(text: string | unknown, env: Env = {}, source = 'headroom.yaml'): string[] {
  const error = caught(() => parseConfig(text, source, env));
  if (error.code !== 'HR_ERR_CONFIG_INVALID') throw new Error(`expected HR_ERR_CONFIG_INVALID, got ${error.code}`);
  return error.message.replace(/^configuration is invalid: /, '').split('\n');
}
