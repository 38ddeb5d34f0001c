import { caught } from '../caught.js';
import { parseConfig } from '../../../src/config/index.js';
import type { Env } from '../../../src/config/index.js';

export const MINIMAL = 'kafka:\n  brokers: ["127.0.0.1:9092"]\n  topics: [scored-events]\n';

/** The message lines of the error parseConfig throws for `text`. */
export function problemsOf(text: string | unknown, env: Env = {}, source = 'headroom.yaml'): string[] {
  const error = caught(() => parseConfig(text, source, env));
  if (error.code !== 'HR_ERR_CONFIG_INVALID') throw new Error(`expected HR_ERR_CONFIG_INVALID, got ${error.code}`);
  return error.message.replace(/^configuration is invalid: /, '').split('\n');
}

export { caught, caughtAsync } from '../caught.js';
