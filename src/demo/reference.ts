/**
 * The demo's reference: a held-out day of the same scenario without any fog, scored by the same model,
 * built by the same buildReference `headroom reference` uses. Its events are drawn from a generator of
 * their own (not the live run's), so the live calm phase is compared with data it does not contain, as
 * a real reference would be. Fixed times and createdAt: one seed gives one file, byte for byte, which
 * is what examples/compose/references/ ships (a unit test rebuilds and compares it).
 */
import { decodeScoredEvent } from '../events/index.js';
import type { ScoredEvent } from '../events/index.js';
import { buildReference, formatReference, parseReference } from '../reference/index.js';
import type { LoadedReference, ReferenceFile } from '../reference/index.js';
import { DEMO_THETA } from './config.js';
import { ParcelScenario } from './scenario.js';

/** About 10,000 parcels a line: the lines 1-2 share near 0.02 is then known to about ±0.003 (one standard error 0.0014). */
export const REFERENCE_EVENTS = 30_000;
/** The held-out day the reference's events are dated on. */
const REFERENCE_DAY_MS = Date.UTC(2026, 10, 26);
/** The reference's events come from another stream than the live run's: the seed with this mixed in. */
const REFERENCE_SEED_MIX = 0x5eed;
const encoder = new TextEncoder();

function* referenceEvents(seed: number, n: number): Generator<ScoredEvent> {
  // No drift within the day: the fog starts after it ends.
  const scenario = new ParcelScenario({ seed: (seed ^ REFERENCE_SEED_MIX) >>> 0, eventsPerSecond: 1, startMs: REFERENCE_DAY_MS, driftAfterMs: n * 1000 + 1, driftRampMs: 0 });
  for (const event of scenario.until(scenario.timeOf(n))) {
    // Through the wire format and the decoder, as `headroom reference` reads its input.
    const decoded = decodeScoredEvent(encoder.encode(JSON.stringify(event.wire)));
    if (!decoded.ok) throw new Error(`the demo's own event ${event.wire.id} does not decode: ${decoded.reason}`);
    yield decoded.event;
  }
}

export function demoReferenceFile(seed: number, n = REFERENCE_EVENTS): ReferenceFile {
  return buildReference(referenceEvents(seed, n), {
    createdAt: new Date(REFERENCE_DAY_MS + 86_400_000).toISOString(),
    source: `headroom demo: ${n} calm parcels of the parcel-inspection scenario (seed ${seed})`,
    thresholds: [0.1, DEMO_THETA],
    segmentKeys: ['line'],
  });
}

/** The file's text as `headroom reference` would write it. */
export function demoReferenceText(seed: number, n = REFERENCE_EVENTS): string {
  return formatReference(demoReferenceFile(seed, n));
}

export function demoReference(seed: number, n = REFERENCE_EVENTS): LoadedReference {
  return parseReference(demoReferenceFile(seed, n), `headroom demo reference (seed ${seed})`);
}
