/** One thing wrong with the configuration, and the single error that reports all of them. */
import { HeadroomError } from '../errors.js';
import { fieldPath as joinFieldPath } from '../field-path.js';

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

export function fieldPath(path: readonly PropertyKey[]): string {
  return joinFieldPath(path) || '(top level)';
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
