/** A reader of the Prometheus text format, just enough to look samples up by name and labels in the tests. */
export interface Sample {
  readonly name: string;
  readonly labels: Readonly<Record<string, string>>;
  readonly value: number;
}

const LABEL = /([a-zA-Z_][a-zA-Z0-9_]*)="((?:[^"\\]|\\.)*)"/g;

function unescape(value: string): string {
  return value.replace(/\\(.)/g, (_, c: string) => (c === 'n' ? '\n' : c));
}

export function parseExposition(text: string): { samples: Sample[]; types: Map<string, string> } {
  const samples: Sample[] = [];
  const types = new Map<string, string>();
  for (const line of text.split('\n')) {
    if (line === '') continue;
    const type = /^# TYPE (\S+) (\S+)$/.exec(line);
    if (type !== null) types.set(type[1] as string, type[2] as string);
    if (line.startsWith('#')) continue;
    const brace = line.indexOf('{');
    const space = line.lastIndexOf(' ');
    const name = brace < 0 ? line.slice(0, space) : line.slice(0, brace);
    const labels: Record<string, string> = {};
    if (brace >= 0) for (const m of line.slice(brace, line.lastIndexOf('}') + 1).matchAll(LABEL)) labels[m[1] as string] = unescape(m[2] as string);
    samples.push({ name, labels, value: Number(line.slice(space + 1)) });
  }
  return { samples, types };
}

/** Samples of `name` whose labels include all of `labels`. */
export function find(samples: readonly Sample[], name: string, labels: Record<string, string> = {}): Sample[] {
  return samples.filter((s) => s.name === name && Object.entries(labels).every(([k, v]) => s.labels[k] === v));
}

/** The one sample of `name` with exactly these labels' values; throws when there is none or several. */
export function value(samples: readonly Sample[], name: string, labels: Record<string, string>): number {
  const found = find(samples, name, labels);
  if (found.length !== 1) throw new Error(`expected one ${name} ${JSON.stringify(labels)}, found ${found.length}`);
  return (found[0] as Sample).value;
}
