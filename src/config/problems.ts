/** One thing wrong with the configuration, and the single error that reports all of them. */
import { HeadroomError } from '../errors.js';

export interface Problem {
  /** Path of the field in the file, e.g. `models[0].thresholds[1]`; `(top level)` for the whole file. */
  readonly field: string;
  /** What is wrong and, where there is one, the fix. */
  readonly detail: string;
  /** The environment variable the value came from, when an override set it. */
  readonly variable?: string;
  /** 1-based line in the file, when known. */
  readonly line?: number;
}

const PLAIN_KEY = /^[A-Za-z_$][\w$]*$/;

export function fieldPath(path: readonly PropertyKey[]): string {
  let out = '';
  for (const key of path) {
    if (typeof key === 'number') out += `[${key}]`;
    else if (typeof key === 'string' && PLAIN_KEY.test(key)) out += out === '' ? key : `.${key}`;
    else out += `[${JSON.stringify(String(key))}]`;
  }
  return out === '' ? '(top level)' : out;
}

export function formatProblem(source: string, p: Problem): string {
  if (p.variable !== undefined) return `${p.variable} (overrides ${p.field} of ${source}): ${p.detail}`;
  return `${source}: ${p.field}: ${p.detail}${p.line === undefined ? '' : ` (line ${p.line})`}`;
}

/** Every problem at once: fixing a config one error per restart is slow. */
export function invalidConfig(source: string, problems: readonly Problem[]): HeadroomError {
  return new HeadroomError('HR_ERR_CONFIG_INVALID', problems.map((p) => formatProblem(source, p)).join('\n'), {
    context: { source, problems },
  });
}
