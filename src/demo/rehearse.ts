/**
 * A dry run of the scenario through the same pure path the live demo takes (pipeline.ts, then
 * evaluateAlerts with the demo's rules every EVALUATE_EVERY_SCENARIO_MS of scenario time), as fast as
 * the CPU allows. The demo runs it before it starts, so "expect an alert by about mm:ss" is what this
 * seed actually does rather than a guess; the unit tests run it to check that only line 3 fires.
 */
import { AlertBook, evaluateAlerts } from '../alerts/index.js';
import type { HeadroomConfig } from '../config/index.js';
import type { LoadedReference } from '../reference/index.js';
import { mergeView } from '../state/index.js';
import { EVALUATE_EVERY_SCENARIO_MS } from './config.js';
import { EmbeddedPartitions } from './pipeline.js';
import { ParcelScenario } from './scenario.js';
import type { ScenarioOptions } from './scenario.js';

export interface Firing {
  readonly rule: string;
  readonly segment: string;
  /** Scenario time since the start. */
  readonly afterMs: number;
}

export interface RehearsalOptions {
  /** How much scenario time to run. */
  readonly forMs: number;
  /** Scenario time between evaluations; default the live demo's. A coarser step is cheaper and only blurs the times found by up to one step. */
  readonly stepMs?: number;
  /** Stop once every rule has fired on this segment. */
  readonly until?: string;
}

/** The first move to firing of every alert within `forMs` of scenario time, earliest first. */
export function rehearse(config: HeadroomConfig, reference: LoadedReference, options: ScenarioOptions, run: RehearsalOptions): Firing[] {
  const step = run.stepMs ?? EVALUATE_EVERY_SCENARIO_MS;
  const scenario = new ParcelScenario(options);
  const partitions = new EmbeddedPartitions(config);
  const book = new AlertBook(config.alerts.rules);
  const firings: Firing[] = [];
  const seen = new Set<string>();
  for (let t = step; t <= run.forMs; t += step) {
    const now = options.startMs + t;
    partitions.feed(scenario.until(now), now);
    const series = mergeView(partitions.all()).series.map((s) => ({ ...s, reference: reference.model === s.model && reference.version === s.version ? reference.segmentFor(s.segment) : undefined }));
    for (const tr of evaluateAlerts(book, series, config.windows).transitions) {
      const key = `${tr.rule}\u0000${tr.series.segment}`;
      if (tr.to !== 'firing' || seen.has(key)) continue;
      seen.add(key);
      firings.push({ rule: tr.rule, segment: tr.series.segment, afterMs: t });
    }
    if (run.until !== undefined && config.alerts.rules.every((r) => seen.has(`${r.name}\u0000${run.until}`))) break;
  }
  return firings;
}
