/**
 * Every PromQL expression in dashboards/: the queries of each Grafana panel and template variable, and each
 * recording and alerting rule, in a form Prometheus's HTTP API can run as it stands.
 */
import { readdirSync, readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { parse } from 'yaml';

export const DASHBOARDS_DIR = join(dirname(fileURLToPath(import.meta.url)), '..', '..', 'dashboards');

export interface FoundQuery {
  /** Where it was found, for failure messages: `file › panel title › refId`. */
  readonly where: string;
  readonly expr: string;
}

export interface FoundRule extends FoundQuery {
  readonly group: string;
  readonly kind: 'record' | 'alert';
  readonly name: string;
}

type Json = Record<string, unknown>;

export function dashboardFiles(): string[] {
  return readdirSync(DASHBOARDS_DIR).filter((f) => f.endsWith('.json')).sort();
}

/** Rule files: every YAML file in dashboards/ except the promtool tests beside them. */
export function ruleFiles(): string[] {
  return readdirSync(DASHBOARDS_DIR).filter((f) => /\.ya?ml$/.test(f) && !/\.test\.ya?ml$/.test(f)).sort();
}

export function readDashboard(file: string): Json {
  return JSON.parse(readFileSync(join(DASHBOARDS_DIR, file), 'utf8')) as Json;
}

function panelsOf(container: Json): Json[] {
  const out: Json[] = [];
  for (const p of (container.panels as Json[] | undefined) ?? []) out.push(p, ...panelsOf(p)); // rows may nest their panels
  return out;
}

export function panelQueries(file: string): FoundQuery[] {
  const out: FoundQuery[] = [];
  for (const panel of panelsOf(readDashboard(file))) {
    for (const t of (panel.targets as Json[] | undefined) ?? []) {
      if (typeof t.expr === 'string') out.push({ where: `${file} › ${String(panel.title)} › ${String(t.refId)}`, expr: t.expr });
    }
  }
  return out;
}

export interface TemplateVariable {
  readonly name: string;
  readonly type: string;
  readonly query: unknown;
}

export function templateVariables(file: string): TemplateVariable[] {
  return (((readDashboard(file).templating as Json | undefined)?.list as Json[] | undefined) ?? []).map((v) => ({ name: String(v.name), type: String(v.type), query: v.query }));
}

/**
 * A variable's `label_values(selector, label)` as the PromQL Grafana's lookup amounts to, `count by (label) (selector)`:
 * data means the drop-down would offer values.
 */
export function variableQueries(file: string): FoundQuery[] {
  const out: FoundQuery[] = [];
  for (const v of templateVariables(file)) {
    if (v.type !== 'query') continue;
    const m = /^label_values\((.+),\s*([a-zA-Z_][a-zA-Z0-9_]*)\)$/.exec(String(v.query));
    if (m === null) throw new Error(`${file}: variable ${v.name} has a query this test cannot run: ${String(v.query)}`);
    out.push({ where: `${file} › variable ${v.name}`, expr: `count by (${m[2]}) (${m[1]})` });
  }
  return out;
}

export function ruleExpressions(file: string): FoundRule[] {
  const doc = parse(readFileSync(join(DASHBOARDS_DIR, file), 'utf8')) as { groups: { name: string; rules: { record?: string; alert?: string; expr: string }[] }[] };
  return doc.groups.flatMap((g) =>
    g.rules.map((r) => {
      const kind = r.alert !== undefined ? ('alert' as const) : ('record' as const);
      const name = r.alert ?? r.record ?? '?';
      return { where: `${file} › ${g.name} › ${name}`, group: g.name, kind, name, expr: r.expr.trim() };
    }),
  );
}

/**
 * Grafana's template variables replaced by real values: `$name`, `${name}` and `${name:format}`; a reference
 * to a variable not in `values` is an error rather than left for Prometheus to misread.
 */
export function substitute(expr: string, values: Readonly<Record<string, string>>): string {
  const out = expr.replace(/\$\{([a-zA-Z_][a-zA-Z0-9_]*)(?::[a-z]+)?\}|\$([a-zA-Z_][a-zA-Z0-9_]*)/g, (whole, braced: string | undefined, bare: string | undefined) => {
    const name = (braced ?? bare) as string;
    const value = values[name];
    if (value === undefined) throw new Error(`no value for the template variable ${whole} in ${expr}`);
    return value;
  });
  return out;
}

const COMPARISON = /^(==|!=|>=|<=|>|<)/;

/**
 * An alert expression with each filtering comparison turned into its `bool` form: `x > 0.25` keeps only the
 * series over the threshold (none, most of the time), `x > bool 0.25` keeps every series the comparison
 * looked at, as 0 or 1. Data from the `bool` form shows that every selector and join of the rule meets real
 * series. Label matchers (inside braces) and strings are left alone.
 */
export function boolForm(expr: string): string {
  let out = '';
  let depth = 0;
  let quote: string | null = null;
  for (let i = 0; i < expr.length; i++) {
    const c = expr[i] as string;
    if (quote !== null) {
      out += c;
      if (c === '\\') out += expr[++i] ?? '';
      else if (c === quote) quote = null;
      continue;
    }
    if (c === '"' || c === "'" || c === '`') quote = c;
    else if (c === '{') depth++;
    else if (c === '}') depth--;
    const op = depth === 0 ? COMPARISON.exec(expr.slice(i)) : null;
    if (op === null) {
      out += c;
      continue;
    }
    const operator = op[1] as string;
    i += operator.length - 1;
    const rest = expr.slice(i + 1);
    out += /^\s*bool\b/.test(rest) ? operator : /^\s/.test(rest) ? `${operator} bool` : `${operator} bool `;
  }
  return out;
}
