/**
 * The demo's watch configuration: the same HeadroomConfig `headroom watch` reads from YAML, made by the
 * same parser (parseConfig) from an object, so the demo runs the checks and defaults a file would get.
 *
 * Chosen for a run of minutes rather than days: 10-second buckets and 10 s of lateness, so a closed
 * bucket reaches the early-warning chart within seconds; views of 1m, 5m and 1h; a shareRise rule per line
 * over the 5m view held for 1 minute, and an earlyWarning chart per line. examples/compose/watch.yaml
 * writes the same settings out for the compose file's watcher (a unit test keeps the two equal).
 */
import { parseConfig } from '../config/index.js';
import type { HeadroomConfig } from '../config/index.js';
import { PARCEL_MODEL } from './parcels.js';

/** The θ the demo's alert rules watch: line 3's reference share there is about 0.31, lines 1-2's about 0.02. */
export const DEMO_THETA = 0.25;
export const DEMO_GROUP = 'headroom-demo';
/** Scenario time between two alert evaluations (the wall-clock cadence is this divided by the speed). */
export const EVALUATE_EVERY_SCENARIO_MS = 5_000;
/** Faster than this the evaluations would only cost CPU: each merges every series' windows. */
const MIN_EVALUATE_EVERY_MS = 200;

/**
 * How long after the drift starts each rule fires on line 3 at the scenario's defaults (rate, ramp), with
 * some slack: what the demo tells a newcomer to expect. Dry runs of seeds 1-10 (rehearse.ts) fired the
 * early warning 1:00-2:00 and the low-margin rise 4:00-5:00 after the drift; test/unit/demo checks these
 * bounds on several seeds.
 */
export const EXPECTED_ALERTS = Object.freeze({ earlyWarningWithinMs: 150_000, shareRiseWithinMs: 330_000 });

export interface DemoConfigOptions {
  /** `host:port` list; the embedded demo names a placeholder it never connects to. */
  readonly brokers: readonly string[];
  readonly topic: string;
  readonly groupId: string;
  readonly host: string;
  readonly port: number;
  readonly checkpointDir: string;
  /** A reference file the watcher reads (`--kafka`); null for the embedded demo, which holds its reference in memory. */
  readonly referencePath: string | null;
  readonly speed: number;
}

/** The settings as a watch YAML file would hold them (examples/compose/watch.yaml is this, written out). */
export function demoConfigDocument(o: DemoConfigOptions): Record<string, unknown> {
  return {
    kafka: { brokers: [...o.brokers], clientId: 'headroom-demo', groupId: o.groupId, topics: [o.topic], sessionTimeout: '10s', heartbeatInterval: '1s' },
    models: [{ name: PARCEL_MODEL, thresholds: [0.1, DEMO_THETA], segmentKeys: ['line'], reference: o.referencePath }],
    windows: ['1m', '5m', '1h'],
    history: { bucket: '10s', fineSpan: '1h', coarseBucket: '5m', retention: '6h' },
    lateness: '10s',
    maxFuture: '5m',
    checkpoint: { dir: o.checkpointDir, interval: '2s' },
    referenceReload: { watchFiles: false },
    alerts: {
      evaluateEvery: `${Math.max(MIN_EVALUATE_EVERY_MS, Math.round(EVALUATE_EVERY_SCENARIO_MS / o.speed))}ms`,
      rules: [
        // The Wilson lower bound of a line's share below θ over 5 minutes, 50 % above its reference share, for a minute.
        { name: 'line-low-margin-rise', kind: 'shareRise', model: PARCEL_MODEL, segmentKey: 'line', threshold: DEMO_THETA, window: '5m', minCount: 300, holdFor: '1m', clearFor: '5m', cooldown: '10m' },
        // A CUSUM per line watching for the share to double. The demo's reference holds about 10,000 parcels
        // a line, so lines 1-2's share near 0.02 is known to ±10 % or so; at the default 10⁷ events between
        // false alarms a reference that low by that much made line 2 fire after 40 minutes in one seed of
        // five. 10⁹ raises the decision level by about ln(100) and delays line 3's alarm by a few parcels only.
        { name: 'line-early-warning', kind: 'earlyWarning', model: PARCEL_MODEL, segmentKey: 'line', threshold: DEMO_THETA, inControlEvents: 1e9, clearFor: '5m', cooldown: '10m' },
      ],
    },
    http: { host: o.host, port: o.port },
  };
}

export function demoConfig(o: DemoConfigOptions): HeadroomConfig {
  return parseConfig(demoConfigDocument(o), 'headroom demo').config;
}
