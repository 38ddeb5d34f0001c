/**
 * parseConfig: YAML text (or an already parsed object) plus the environment in, a fully defaulted and
 * checked HeadroomConfig out. Pure: no file system, no process.env; loadConfig is the edge around it.
 */
import { LineCounter, parseDocument } from 'yaml';
import type { Document } from 'yaml';
import type { z } from 'zod';
import { HeadroomError } from '../errors.js';
import { applyEnvOverrides, ENV_VARIABLES, overrideFor } from './env.js';
import type { Env, Override } from './env.js';
import { fieldPath, invalidConfig } from './problems.js';
import type { Problem } from './problems.js';
import { configSchema, KNOWN_KEYS, SECTION_KEYS } from './schema.js';
import { ANY_MODEL, resolveParsed } from './resolve.js';
import type { ConfigResult, HeadroomConfig, ModelConfig } from './types.js';

interface YamlSource {
  readonly doc: Document.Parsed;
  readonly lines: LineCounter;
}

function readYaml(text: string, source: string): { value: unknown; yaml: YamlSource } {
  const lines = new LineCounter();
  const doc = parseDocument(text, { lineCounter: lines, prettyErrors: false, uniqueKeys: true });
  const error = doc.errors[0];
  if (error !== undefined) {
    const at = error.linePos?.[0] ?? lines.linePos(error.pos[0]);
    const line = at.line;
    throw new HeadroomError('HR_ERR_CONFIG_INVALID', `${source}:${line}:${at.col}: YAML syntax: ${error.message.split('\n')[0]}`, {
      context: { source, line, column: at.col, yamlCode: error.code },
    });
  }
  return { value: doc.toJS({ maxAliasCount: 100 }) as unknown, yaml: { doc, lines } };
}

/** The line of the deepest node on `path` that exists (the parent, when the field itself is absent). */
function lineOf(yaml: YamlSource | undefined, path: readonly PropertyKey[]): number | undefined {
  if (yaml === undefined) return undefined;
  for (let n = path.length; n >= 1; n -= 1) {
    const node = yaml.doc.getIn(path.slice(0, n), true) as { range?: [number, number, number] } | undefined;
    if (node !== undefined && node !== null && Array.isArray(node.range)) return yaml.lines.linePos(node.range[0]).line;
  }
  return undefined;
}

function editDistance(a: string, b: string): number {
  const row = Array.from({ length: b.length + 1 }, (_, j) => j);
  for (let i = 1; i <= a.length; i += 1) {
    let diagonal = row[0] as number;
    row[0] = i;
    for (let j = 1; j <= b.length; j += 1) {
      const above = row[j] as number;
      row[j] = Math.min(above + 1, (row[j - 1] as number) + 1, diagonal + (a[i - 1]?.toLowerCase() === b[j - 1]?.toLowerCase() ? 0 : 1));
      diagonal = above;
    }
  }
  return row[b.length] as number;
}

/** The closest key of the section the misspelt one sits in (`path`: the section's path), else of any section. */
function suggestion(key: string, path: readonly PropertyKey[]): string {
  const at = path.map((p, i) => (typeof p === 'number' ? '[]' : `${i === 0 ? '' : '.'}${String(p)}`)).join('');
  let best: string | undefined;
  let bestDistance = Infinity;
  for (const known of SECTION_KEYS.get(at) ?? KNOWN_KEYS) {
    const d = editDistance(key, known);
    if (d < bestDistance) {
      best = known;
      bestDistance = d;
    }
  }
  return best !== undefined && bestDistance <= Math.max(1, Math.floor(key.length / 3)) ? `; did you mean ${JSON.stringify(best)}?` : '';
}

function describeInput(value: unknown): string {
  if (value === undefined) return 'nothing (the field is absent)';
  if (value === null) return 'null';
  if (Array.isArray(value)) return 'a list';
  if (typeof value === 'object') return 'a mapping';
  if (typeof value === 'string') return `the string ${JSON.stringify(value)}`;
  return `${typeof value} ${String(value)}`;
}

const TYPE_WORDS: Record<string, string> = { object: 'a mapping', array: 'a list', string: 'a string', number: 'a number', boolean: 'true or false' };

const REQUIRED_HINTS: Record<string, string> = {
  kafka: 'a mapping with at least brokers and topics',
  'kafka.brokers': `a list of host:port, or set ${ENV_VARIABLES.brokers}`,
  'kafka.topics': 'a list of the topics that carry scored events',
  'kafka.sasl.username': `set it here or in ${ENV_VARIABLES.saslUsername}`,
};

function issueProblems(issue: z.core.$ZodIssue): { path: PropertyKey[]; detail: string }[] {
  const path = [...issue.path];
  switch (issue.code) {
    case 'unrecognized_keys':
      return issue.keys.map((key) => ({ path: [...path, key], detail: `is not a setting here${suggestion(key, path)}` }));
    case 'invalid_type': {
      const expected = TYPE_WORDS[issue.expected] ?? issue.expected;
      if (issue.input !== undefined) return [{ path, detail: `must be ${expected}, got ${describeInput(issue.input)}` }];
      return [{ path, detail: `is required (${REQUIRED_HINTS[fieldPath(path)] ?? expected})` }];
    }
    case 'invalid_value':
      return [{ path, detail: issue.input === undefined ? `is required; it ${issue.message}` : `${issue.message}, got ${describeInput(issue.input)}` }];
    default: {
      const input = issue.input;
      const shown = input === undefined || typeof input === 'object' || issue.message.includes('got') ? '' : `, got ${String(input)}`;
      return [{ path, detail: `${issue.message}${shown}` }];
    }
  }
}

function toProblem(path: readonly PropertyKey[], detail: string, overrides: readonly Override[], yaml: YamlSource | undefined): Problem {
  const field = fieldPath(path);
  const override = overrideFor(field, overrides);
  if (override !== undefined) return { field, detail, variable: override.variable };
  const line = lineOf(yaml, path);
  return line === undefined ? { field, detail } : { field, detail, line };
}

/**
 * Validates `input` (YAML text, or a value already parsed) with the overrides from `env` applied first.
 * `source` names the file in every message. Throws HR_ERR_CONFIG_INVALID listing every problem found.
 */
export function parseConfig(input: string | unknown, source: string, env: Env = {}): ConfigResult {
  let raw: unknown = input;
  let yaml: YamlSource | undefined;
  if (typeof input === 'string') ({ value: raw, yaml } = readYaml(input, source));
  const overridden = applyEnvOverrides(raw, env);
  const warnings = [...overridden.warnings];
  const problems: Problem[] = [...overridden.problems];
  const document = overridden.document ?? {};
  const result = configSchema.safeParse(document, { reportInput: true });
  if (!result.success) {
    for (const issue of result.error.issues) {
      for (const { path, detail } of issueProblems(issue)) problems.push(toProblem(path, detail, overridden.overrides, yaml));
    }
    throw invalidConfig(source, problems);
  }
  const passwordFromEnv = overridden.overrides.some((o) => o.variable === ENV_VARIABLES.saslPassword);
  const config = resolveParsed(result.data, source, passwordFromEnv, (path, detail) => problems.push(toProblem(path, detail, overridden.overrides, yaml)), warnings);
  if (problems.length > 0 || config === undefined) throw invalidConfig(source, problems);
  return { config, warnings };
}

/** The model entry an event of `model` is watched under: its own, else the "*" entry, else none (not watched). */
export function modelFor(config: HeadroomConfig, model: string): ModelConfig | undefined {
  return config.models.find((m) => m.name === model) ?? config.models.find((m) => m.name === ANY_MODEL);
}
