import { describe, expect, it } from 'vitest';
import { decodeScoredEvent } from '../../../src/events/index.js';
import { measureMargins } from '../../../src/margin/index.js';
import { demoConfig, demoReference, EXPECTED_ALERTS, expectedShare, ParcelScenario, rehearse, SCENARIO_DEFAULTS } from '../../../src/demo/index.js';
import type { ScenarioOptions } from '../../../src/demo/index.js';

const START = Date.UTC(2026, 11, 1, 8);
const options = (seed: number): ScenarioOptions => ({ ...SCENARIO_DEFAULTS, seed, startMs: START });
const MINUTE = 60_000;

/** Low-margin share at θ per line of the events in [fromMs, toMs), through the real decoder and margins. */
function shares(seed: number, fromMs: number, toMs: number, theta: number): Map<string, number> {
  const scenario = new ParcelScenario(options(seed));
  scenario.until(START + fromMs);
  const counts = new Map<string, { n: number; low: number }>();
  for (const e of scenario.until(START + toMs)) {
    const decoded = decodeScoredEvent(new TextEncoder().encode(JSON.stringify(e.wire)));
    if (!decoded.ok) throw new Error(decoded.reason);
    const m = measureMargins(decoded.event.score, decoded.event.label);
    if (!m.ok) throw new Error(m.reason);
    const c = counts.get(e.line) ?? { n: 0, low: 0 };
    c.n += 1;
    if (m.confidence < theta) c.low += 1;
    counts.set(e.line, c);
  }
  return new Map([...counts].map(([line, c]) => [line, c.low / c.n]));
}

describe('the parcel scenario', () => {
  it('is seeded: the same seed gives the same events however time is sliced, another seed others', () => {
    const whole = new ParcelScenario(options(7)).until(START + 5 * MINUTE);
    const sliced = new ParcelScenario(options(7));
    const parts = [1, 2.5, 4, 5].flatMap((m) => sliced.until(START + m * MINUTE));
    expect(parts).toEqual(whole);
    expect(whole.length).toBe(5 * 60 * SCENARIO_DEFAULTS.eventsPerSecond);
    const other = new ParcelScenario(options(8)).until(START + 5 * MINUTE);
    expect(other.map((e) => e.wire.score.p)).not.toEqual(whole.map((e) => e.wire.score.p));
  });

  it("collapses line 3's margins after the drift by a clear factor, and leaves lines 1 and 2 alone", () => {
    for (const seed of [1, 2]) {
      const before = shares(seed, 0, 3 * MINUTE, 0.25);
      const after = shares(seed, 6 * MINUTE, 10 * MINUTE, 0.25);
      expect(after.get('3')! / before.get('3')!).toBeGreaterThan(1.8);
      expect(after.get('3')!).toBeCloseTo(expectedShare(options(seed), '3', START + 8 * MINUTE, 0.25), 1);
      for (const line of ['1', '2']) {
        expect(before.get(line)!).toBeLessThan(0.04);
        expect(after.get(line)!).toBeLessThan(0.04);
      }
    }
  });

  it('fires both alerts on line 3, and nothing on lines 1-2, within the times the demo announces', () => {
    const config = demoConfig({ brokers: ['127.0.0.1:9'], topic: 't', groupId: 'g', host: '127.0.0.1', port: 0, checkpointDir: '/nonexistent', referencePath: null, speed: 1 });
    for (const seed of [1, 3]) {
      const firings = rehearse(config, demoReference(seed), options(seed), { forMs: 15 * MINUTE, stepMs: 20_000 });
      expect(firings.filter((f) => f.segment !== 'line=3')).toEqual([]);
      const at = (rule: string): number | undefined => firings.find((f) => f.rule === rule && f.segment === 'line=3')?.afterMs;
      const drift = SCENARIO_DEFAULTS.driftAfterMs;
      expect(at('line-early-warning')).toBeGreaterThan(drift);
      expect(at('line-early-warning')).toBeLessThanOrEqual(drift + EXPECTED_ALERTS.earlyWarningWithinMs);
      expect(at('line-low-margin-rise')).toBeGreaterThan(drift);
      expect(at('line-low-margin-rise')).toBeLessThanOrEqual(drift + EXPECTED_ALERTS.shareRiseWithinMs);
    }
  }, 120_000);
});
