/**
 * Scored events for the integration tests, with what each should count as computed here from the
 * definitions in DESIGN.md "Margins" (not by src/margin), and malformed messages with the reason code
 * src/events/reasons.ts gives each. Seeded (mulberry32), so a failure can be replayed.
 */
import { rng } from '../unit/events/prng.js';
import type { Rng } from '../unit/events/prng.js';

export interface ProducedEvent {
  readonly model: string;
  readonly version: string;
  readonly segment: Readonly<Record<string, string>>;
  /** The confidence margin by its definition: |2p − 1|, |tanh(z/2)|, |sum/total|, top1 − top2. */
  readonly margin: number;
  readonly wire: string;
}

export interface ModelSpec {
  readonly name: string;
  readonly version: string;
  readonly kind: 'probability' | 'logit' | 'votes' | 'classes';
  /** Segment key → its values; each event picks one value per key. */
  readonly segments: Readonly<Record<string, readonly string[]>>;
  /** Pulls margins towards 0 when < 1 (a model unsure of itself); default 1. */
  readonly spread?: number;
}

export const PARCEL_MODELS: readonly ModelSpec[] = [
  { name: 'parcel-damage', version: '2026.11.3', kind: 'probability', segments: { line: ['1', '2', '3'], site: ['north', 'south'] } },
  { name: 'label-reader', version: 'v12', kind: 'logit', segments: { line: ['1', '2', '3'] }, spread: 0.6 },
  { name: 'route-sorter', version: '4.2.0', kind: 'classes', segments: { site: ['north', 'south'] } },
  { name: 'seal-check', version: '1.0.1', kind: 'votes', segments: {} },
];

const round3 = (x: number): number => Math.round(x * 1000) / 1000;

function score(spec: ModelSpec, r: Rng): { score: Record<string, unknown>; margin: number } {
  const spread = spec.spread ?? 1;
  switch (spec.kind) {
    case 'probability': {
      const p = round3(0.5 + (r.next() - 0.5) * spread);
      return { score: { kind: 'probability', p }, margin: Math.abs(2 * p - 1) };
    }
    case 'logit': {
      const z = Math.round((r.next() * 8 - 4) * spread * 100) / 100;
      return { score: { kind: 'logit', z }, margin: Math.abs(Math.tanh(z / 2)) };
    }
    case 'votes': {
      const total = round3(1 + r.next() * 4);
      const sum = round3((r.next() * 2 - 1) * total * spread);
      return { score: { kind: 'votes', sum, total }, margin: Math.abs(sum / total) };
    }
    case 'classes': {
      const a = round3(r.next());
      const b = round3(r.next() * (1 - a));
      const c = round3(1 - a - b);
      const sorted = [a, b, c].sort((x, y) => y - x);
      return { score: { kind: 'classes', values: { letter: a, parcel: b, pallet: c } }, margin: (sorted[0] as number) - (sorted[1] as number) };
    }
  }
}

export interface EventOptions {
  readonly n: number;
  readonly seed: number;
  readonly fromMs: number;
  readonly spanMs: number;
  readonly idPrefix: string;
  readonly models?: readonly ModelSpec[];
  /** A margin this close to one of these could fall on either side after rounding: such events are drawn again. */
  readonly thresholds: readonly number[];
}

export function makeScoredEvents(options: EventOptions): ProducedEvent[] {
  const models = options.models ?? PARCEL_MODELS;
  const r = rng(options.seed);
  const out: ProducedEvent[] = [];
  while (out.length < options.n) {
    const spec = r.pick(models);
    const { score: s, margin } = score(spec, r);
    if (options.thresholds.some((t) => Math.abs(margin - t) < 1e-9)) continue;
    const segment: Record<string, string> = {};
    for (const [key, values] of Object.entries(spec.segments)) segment[key] = r.pick(values);
    const time = new Date(Math.floor(options.fromMs + r.next() * options.spanMs)).toISOString();
    const id = `${options.idPrefix}-${out.length}`;
    const wire = JSON.stringify({ id, model: spec.name, version: spec.version, time, score: s, segment });
    out.push({ model: spec.name, version: spec.version, segment, margin, wire });
  }
  return out;
}

/** `model\0version\0segment` for every series an event lands in: `all`, plus `key=value` per segment key. */
export function seriesOf(event: ProducedEvent): string[] {
  const key = (segment: string): string => `${event.model}\u0000${event.version}\u0000${segment}`;
  return [key('all'), ...Object.entries(event.segment).map(([k, v]) => key(`${k}=${v}`))];
}

export interface ExpectedSeries {
  readonly model: string;
  readonly version: string;
  readonly segment: string;
  readonly events: number;
  /** θ → count of events with margin < θ. */
  readonly below: ReadonlyMap<number, number>;
}

export function expectedSeries(events: readonly ProducedEvent[], thresholds: readonly number[]): Map<string, ExpectedSeries> {
  const out = new Map<string, { model: string; version: string; segment: string; events: number; below: Map<number, number> }>();
  for (const event of events) {
    for (const key of seriesOf(event)) {
      let entry = out.get(key);
      if (entry === undefined) {
        const [model, version, segment] = key.split('\u0000') as [string, string, string];
        entry = { model, version, segment, events: 0, below: new Map(thresholds.map((t) => [t, 0])) };
        out.set(key, entry);
      }
      entry.events += 1;
      for (const t of thresholds) if (event.margin < t) entry.below.set(t, (entry.below.get(t) ?? 0) + 1);
    }
  }
  return out;
}

export interface Malformed {
  readonly value: Buffer | null;
  readonly reason: string;
}

const valid = (over: Record<string, unknown>): string =>
  JSON.stringify({ id: 'bad', model: 'parcel-damage', version: '2026.11.3', time: new Date().toISOString(), score: { kind: 'probability', p: 0.5 }, ...over });

/**
 * Malformed messages of many kinds, each with its reason. `hugeBytes` > 0 adds one payload of that size
 * (over the decoder's byte limit). Random bytes always hold 0xFF, which never occurs in UTF-8.
 */
export function makeMalformed(n: number, seed: number, hugeBytes = 0): Malformed[] {
  const r = rng(seed);
  const text = (s: string): Buffer => Buffer.from(s, 'utf8');
  const kinds: ((i: number) => Malformed)[] = [
    () => {
      const bytes = Buffer.from(Array.from({ length: 1 + r.int(200) }, () => r.int(256)));
      bytes[r.int(bytes.length)] = 0xff;
      return { value: bytes, reason: 'not_utf8' };
    },
    (i) => ({ value: text(`{"id":"bad-${i}","model":"parcel-damage","version":"1","score":{"kind":"probability","p":NaN}}`), reason: 'not_json' }),
    () => ({ value: text(valid({ score: { kind: 'probability', p: 1.5 } })), reason: 'probability_out_of_range' }),
    () => ({ value: text(valid({ score: { kind: 'logit', z: '2.5' } })), reason: 'wrong_type' }),
    () => ({ value: text(valid({ model: '' })), reason: 'empty_value' }),
    () => ({ value: null, reason: 'not_json' }),
    () => ({ value: text(''), reason: 'not_json' }),
    () => ({ value: text(valid({ score: { kind: 'logit', z: 7 } }).replace('"z":7', '"z":1e999')), reason: 'not_finite' }),
    () => ({ value: text(valid({ score: { kind: 'votes', sum: 3, total: 2 } })), reason: 'votes_sum_exceeds_total' }),
    () => ({ value: text(valid({ score: { kind: 'classes', values: { a: 0.7, b: 0.7 } } })), reason: 'classes_not_normalised' }),
    () => ({ value: text(valid({ time: 'last tuesday' })), reason: 'bad_time' }),
    () => ({ value: text(valid({ score: { kind: 'hunch', value: 0.3 } })), reason: 'unknown_score_kind' }),
    () => ({ value: text('[0.91]'), reason: 'not_object' }),
    () => ({ value: text(valid({ segment: { 'line=2': 'x' } })), reason: 'bad_segment_key' }),
  ];
  const out = Array.from({ length: n }, (_, i) => (kinds[i % kinds.length] as (i: number) => Malformed)(i));
  if (hugeBytes > 0) out.push({ value: text(`{"id":"huge","pad":"${'x'.repeat(hugeBytes)}"}`), reason: 'too_large' });
  return out;
}

/** Counts per reason, as `headroom_events_rejected_total{reason}` should show them. */
export function reasonCounts(bad: readonly Malformed[]): Map<string, number> {
  const out = new Map<string, number>();
  for (const b of bad) out.set(b.reason, (out.get(b.reason) ?? 0) + 1);
  return out;
}
