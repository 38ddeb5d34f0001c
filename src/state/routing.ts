/**
 * Which series an event feeds. A series is (model, version, segment): `segment = "all"` for the whole
 * model version, and `"k=value"` for each configured segment key k the event carries, one key at a time
 * (an event with line=3 and shift=night feeds all, line=3 and shift=night; never line=3,shift=night).
 *
 * The cap. At most `maxSeries` series per model, counted over all its versions and segments, so a
 * key with unbounded values (a user id sent by mistake) cannot grow memory without end. Once a model is
 * at the cap, an event whose value has no series yet goes to `k=other` and is counted as folded under
 * (model, k). `all` and `k=other` are never refused, so the cap is soft: a model holds at most
 * maxSeries plus, per version, one `all` and one `other` per key. Values that got a series before the
 * cap was reached keep it; the first values seen win, so which values are folded depends on arrival
 * order, which a restored state reproduces (the router is rebuilt from the series it held).
 *
 * A real value "other" (OTHER_SEGMENT_VALUE, shared with reference files so that live and reference
 * segments line up) lands in `k=other` with the folded values, and is not counted as folded: it was
 * not turned away, it just shares its name with the place the others go.
 *
 * Settings are per model (segment keys, cap), looked up when an event's model is first seen. A model
 * without settings is not watched: route() returns no series for it (and keeps nothing, so a producer
 * inventing model names cannot grow memory).
 *
 * The cap is per router, i.e. per Kafka partition: partitions route on their own, so a merged view
 * may hold up to (partitions × maxSeries) series of a model, and a value folded in one partition may
 * have its own series in another (its merged `k=value` then undercounts and `k=other` holds the rest).
 */
import type { ScoredEvent } from '../events/index.js';
import { ALL_SEGMENT } from '../reference/format.js';
import { OTHER_SEGMENT_VALUE } from '../reference/options.js';
import { badArgument } from './fail.js';

export const DEFAULT_MAX_SERIES = 200;
export { ALL_SEGMENT, OTHER_SEGMENT_VALUE };

export interface SeriesId {
  readonly model: string;
  readonly version: string;
  /** `all`, or `key=value`. */
  readonly segment: string;
}

export interface RoutingOptions {
  /** Segment keys that get a series per value. */
  readonly segmentKeys?: readonly string[];
  /** Series per model, over its versions and segments, before values are folded into `k=other`. */
  readonly maxSeries?: number;
}

export interface RoutingConfig {
  readonly segmentKeys: readonly string[];
  readonly maxSeries: number;
}

/** Defaults filled in and checked; HR_ERR_STATE_ARGUMENT names the field, under `path`. */
export function routingConfig(options: RoutingOptions = {}, path = ''): RoutingConfig {
  const bad = (field: string, detail: string, value?: unknown): Error => badArgument(`${path}${field}`, detail, value);
  const segmentKeys = options.segmentKeys ?? [];
  if (!Array.isArray(segmentKeys)) throw bad('segmentKeys', 'must be an array of names', segmentKeys);
  segmentKeys.forEach((key, i) => {
    if (typeof key !== 'string' || key === '' || key.includes('=') || key === '__proto__') {
      throw bad(`segmentKeys[${i}]`, 'must be a non-empty name without "=" (segments are named key=value)', key);
    }
    if (segmentKeys.indexOf(key) !== i) throw bad('segmentKeys', `names ${JSON.stringify(key)} twice`, segmentKeys);
  });
  const maxSeries = options.maxSeries ?? DEFAULT_MAX_SERIES;
  if (!Number.isSafeInteger(maxSeries) || maxSeries < 1) throw bad('maxSeries', 'must be a whole number >= 1', maxSeries);
  return Object.freeze({ segmentKeys: Object.freeze([...segmentKeys]), maxSeries });
}

/** `key=value` split at the first "=" (keys never hold one); undefined for `all` or a malformed segment. */
export function splitSegment(segment: string): { readonly key: string; readonly value: string } | undefined {
  const at = segment.indexOf('=');
  if (at <= 0) return undefined;
  return { key: segment.slice(0, at), value: segment.slice(at + 1) };
}

interface VersionRoutes<T> {
  readonly all: T;
  readonly allId: SeriesId;
  /** Per configured key (by index in the model's segmentKeys): value → series; `other` sits here too once made. */
  readonly byKey: Map<string, T>[];
}

interface ModelRoutes<T, S> {
  readonly settings: S;
  readonly versions: Map<string, VersionRoutes<T>>;
  seriesCount: number;
  /** Folded events per key index. */
  readonly folded: number[];
}

export interface RoutedSeries<T> {
  readonly id: SeriesId;
  readonly series: T;
}

/**
 * Routes events to series made by `create`. Generic in the series and in the per-model settings so
 * that it stays a pure, testable piece: PartitionState hands it windows and counters, and settings
 * that carry each model's window config beside its routing.
 */
export class SeriesRouter<T, S extends RoutingConfig = RoutingConfig> {
  private readonly models = new Map<string, ModelRoutes<T, S>>();
  private readonly made: RoutedSeries<T>[] = [];

  /** `settingsOf` returns a model's settings (checked, e.g. by routingConfig()) or undefined when it is not watched. */
  constructor(
    private readonly settingsOf: (model: string) => S | undefined,
    private readonly create: (id: SeriesId, settings: S) => T,
  ) {}

  /**
   * Writes the series `event` feeds into `out` from index 0 and returns how many (0: its model is not
   * watched). The caller keeps one scratch array, so routing an event allocates nothing once its series
   * exist. Lookups go through nested maps (model → version → key → value) rather than a
   * `model|version|k=v` string per series: building those strings would cost an allocation and a hash
   * of a long string per series per event.
   */
  route(event: ScoredEvent, out: T[]): number {
    const model = this.modelRoutes(event.model);
    if (model === undefined) return 0;
    let version = model.versions.get(event.version);
    if (version === undefined) version = this.addVersion(model, event.model, event.version);
    out[0] = version.all;
    let n = 1;
    const keys = model.settings.segmentKeys;
    const segment = event.segment;
    for (let k = 0; k < keys.length; k += 1) {
      const key = keys[k] as string;
      if (!Object.hasOwn(segment, key)) continue;
      const value = segment[key] as string;
      const values = version.byKey[k] as Map<string, T>;
      let series = values.get(value);
      if (series === undefined) series = this.newValue(model, event.model, event.version, k, value, values);
      out[n] = series;
      n += 1;
    }
    return n;
  }

  /** The id of a version's `all` series, once made: its strings can be shared by whatever refers to the series. */
  idOfAll(model: string, version: string): SeriesId | undefined {
    return this.models.get(model)?.versions.get(version)?.allId;
  }

  /** The settings of a model, or undefined when it is not watched. */
  settings(model: string): S | undefined {
    return this.models.get(model)?.settings ?? this.settingsOf(model);
  }

  /**
   * Puts back a series of a restored state. False (and nothing kept) when its model is no longer watched
   * or its segment key no longer configured for the model.
   */
  restore(id: SeriesId, series: T): boolean {
    const model = this.modelRoutes(id.model);
    if (model === undefined) return false;
    if (id.segment === ALL_SEGMENT) {
      if (model.versions.has(id.version)) throw badArgument('series', `holds ${describeSeries(id)} twice`);
      model.versions.set(id.version, { all: series, allId: id, byKey: model.settings.segmentKeys.map(() => new Map<string, T>()) });
      this.remember(model, id, series);
      return true;
    }
    const split = splitSegment(id.segment);
    if (split === undefined) throw badArgument('series.segment', `must be "all" or "key=value", got ${JSON.stringify(id.segment)}`);
    const k = model.settings.segmentKeys.indexOf(split.key);
    if (k < 0) return false;
    const version = model.versions.get(id.version);
    if (version === undefined) throw badArgument('series', `holds ${describeSeries(id)} before the "all" series of its version`);
    const values = version.byKey[k] as Map<string, T>;
    if (values.has(split.value)) throw badArgument('series', `holds ${describeSeries(id)} twice`);
    values.set(split.value, series);
    this.remember(model, id, series);
    return true;
  }

  /** Puts back folded counts of a restored state. False if the model or key is no longer configured. */
  restoreFolded(model: string, key: string, count: number): boolean {
    const routes = this.modelRoutes(model);
    const k = routes === undefined ? -1 : routes.settings.segmentKeys.indexOf(key);
    if (routes === undefined || k < 0) return false;
    routes.folded[k] = (routes.folded[k] as number) + count;
    return true;
  }

  /** Every series, in the order it was made (or restored). */
  series(): readonly RoutedSeries<T>[] {
    return this.made;
  }

  /** Folded events per model and key; only non-zero counts. */
  folded(): Record<string, Record<string, number>> {
    const out: Record<string, Record<string, number>> = {};
    for (const [model, routes] of this.models) {
      routes.folded.forEach((count, k) => {
        if (count === 0) return;
        (out[model] ??= {})[routes.settings.segmentKeys[k] as string] = count;
      });
    }
    return out;
  }

  seriesCount(model: string): number {
    return this.models.get(model)?.seriesCount ?? 0;
  }

  private modelRoutes(model: string): ModelRoutes<T, S> | undefined {
    let routes = this.models.get(model);
    if (routes === undefined) {
      const settings = this.settingsOf(model);
      if (settings === undefined) return undefined;
      routes = { settings, versions: new Map(), seriesCount: 0, folded: settings.segmentKeys.map(() => 0) };
      this.models.set(model, routes);
    }
    return routes;
  }

  private addVersion(model: ModelRoutes<T, S>, modelName: string, version: string): VersionRoutes<T> {
    const id: SeriesId = { model: modelName, version, segment: ALL_SEGMENT };
    const routes: VersionRoutes<T> = { all: this.create(id, model.settings), allId: id, byKey: model.settings.segmentKeys.map(() => new Map<string, T>()) };
    model.versions.set(version, routes);
    this.remember(model, id, routes.all);
    return routes;
  }

  private newValue(model: ModelRoutes<T, S>, modelName: string, version: string, k: number, value: string, values: Map<string, T>): T {
    const key = model.settings.segmentKeys[k] as string;
    if (value !== OTHER_SEGMENT_VALUE && model.seriesCount < model.settings.maxSeries) {
      return this.make(model, { model: modelName, version, segment: `${key}=${value}` }, value, values);
    }
    if (value !== OTHER_SEGMENT_VALUE) model.folded[k] = (model.folded[k] as number) + 1;
    const other = values.get(OTHER_SEGMENT_VALUE);
    if (other !== undefined) return other;
    return this.make(model, { model: modelName, version, segment: `${key}=${OTHER_SEGMENT_VALUE}` }, OTHER_SEGMENT_VALUE, values);
  }

  private make(model: ModelRoutes<T, S>, id: SeriesId, value: string, values: Map<string, T>): T {
    const series = this.create(id, model.settings);
    values.set(value, series);
    this.remember(model, id, series);
    return series;
  }

  private remember(model: ModelRoutes<T, S>, id: SeriesId, series: T): void {
    model.seriesCount += 1;
    this.made.push({ id, series });
  }
}

export function describeSeries(id: SeriesId): string {
  return `${JSON.stringify(id.model)}/${JSON.stringify(id.version)}/${JSON.stringify(id.segment)}`;
}
