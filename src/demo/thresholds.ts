/**
 * The early-warning decision levels the demo's charts will need, solved before its clock starts. Each
 * takes a second or two of CPU (cusumThreshold); solved lazily at the first evaluation, as the watcher
 * does, they would stall the event loop while scenario time runs on, and at --speed 60 a few stalled
 * seconds are minutes of scenario skipped in one lump.
 */
import { cusumThreshold } from '../alerts/index.js';
import type { ThresholdFor } from '../alerts/index.js';
import type { HeadroomConfig } from '../config/index.js';
import type { LoadedReference } from '../reference/index.js';

export function solvedThresholds(config: HeadroomConfig, reference: LoadedReference): ThresholdFor {
  const solved = new Map<string, number>();
  const key = (p0: number, p1: number, n: number): string => `${p0}\u0000${p1}\u0000${n}`;
  for (const rule of config.alerts.rules) {
    if (rule.kind !== 'earlyWarning') continue;
    for (const [name, segment] of reference.segments) {
      if (!(rule.segmentKey === null ? name === 'all' : name.startsWith(`${rule.segmentKey}=`))) continue;
      const p0 = segment.lowMarginShare(rule.threshold);
      if (p0 === undefined || !(p0 > 0 && p0 * rule.riseFactor < 1)) continue;
      // p1 as the book derives it (early-warning.ts), so the lookup below finds it.
      const p1 = p0 * rule.riseFactor;
      solved.set(key(p0, p1, rule.inControlEvents), cusumThreshold(p0, p1, rule.inControlEvents));
    }
  }
  return (p0, p1, n) => solved.get(key(p0, p1, n)) ?? cusumThreshold(p0, p1, n);
}
