import { describe, expect, it } from 'vitest';
import { ALERT_CONFIG_KEYS, ALERT_DEFAULTS, checkAlertRules, parseAlertsSection } from '../../../src/alerts/index.js';
import { caught } from '../caught.js';

function problems(value: unknown): string[] {
  const error = caught(() => parseAlertsSection(value, 'headroom.yaml'));
  expect(error.code).toBe('HR_ERR_CONFIG_INVALID');
  return error.message.replace(/^configuration is invalid: /, '').split('\n');
}

describe('alerts section: defaults', () => {
  it('is an empty list of rules when left out', () => {
    expect(parseAlertsSection(undefined)).toEqual({ rules: [] });
  });

  it('fills each kind with its documented defaults', () => {
    const { rules } = parseAlertsSection({
      rules: [
        { name: 'rise', kind: 'shareRise', threshold: 0.1 },
        { name: 'early', kind: 'earlyWarning', threshold: 0.1, model: 'parcel-damage', segmentKey: 'line' },
        { name: 'psi', kind: 'drift', statistic: 'psi' },
        { name: 'ks', kind: 'drift', statistic: 'ks', above: 0.2 },
      ],
    });
    expect(rules[0]).toEqual({
      name: 'rise', kind: 'shareRise', model: '*', segmentKey: null, threshold: 0.1, window: '1h', tolerance: 0.5, clearTolerance: 0.25,
      minCount: 500, z: ALERT_DEFAULTS.z, holdMs: 300_000, clearMs: 600_000, cooldownMs: 1_800_000,
    });
    expect(rules[1]).toEqual({
      name: 'early', kind: 'earlyWarning', model: 'parcel-damage', segmentKey: 'line', threshold: 0.1, riseFactor: 2, inControlEvents: 1e7,
      clearFraction: 0.5, holdMs: 0, clearMs: 600_000, cooldownMs: 1_800_000,
    });
    expect(rules[2]).toMatchObject({ statistic: 'psi', above: 0.25, clearBelow: 0.1, holdMs: 600_000, minCount: 500 });
    expect(rules[3]).toMatchObject({ statistic: 'ks', above: 0.2, clearBelow: 0.1 });
  });

  it('takes durations with units, zero included, and derives clearTolerance from tolerance', () => {
    const { rules } = parseAlertsSection({ rules: [{ name: 'r', kind: 'shareRise', threshold: 0.25, tolerance: 1, holdFor: '0s', clearFor: '90s', cooldown: '2h' }] });
    expect(rules[0]).toMatchObject({ tolerance: 1, clearTolerance: 0.5, holdMs: 0, clearMs: 90_000, cooldownMs: 7_200_000 });
  });

  it('lists its keys for "did you mean"', () => {
    for (const key of ['rules', 'kind', 'holdFor', 'clearFor', 'cooldown', 'tolerance', 'inControlEvents', 'statistic', 'clearBelow']) expect(ALERT_CONFIG_KEYS).toContain(key);
  });
});

describe('alerts section: bad config names the field', () => {
  it.each([
    [{ rules: [{ name: 'r', kind: 'shareRise' }] }, 'headroom.yaml: alerts.rules[0].threshold: must be a number'],
    [{ rules: [{ name: 'r', kind: 'shareRise', threshold: 1.5 }] }, 'headroom.yaml: alerts.rules[0].threshold: must be in (0, 1)'],
    [{ rules: [{ name: 'r', kind: 'shareRise', threshold: 0.1, tolerance: 0.2, clearTolerance: 0.3 }] }, 'headroom.yaml: alerts.rules[0].clearTolerance: must be below tolerance (0.2)'],
    [{ rules: [{ name: 'r', kind: 'earlyWarning', threshold: 0.1, riseFactor: 0.5 }] }, 'headroom.yaml: alerts.rules[0].riseFactor: must be greater than 1'],
    [{ rules: [{ name: 'r', kind: 'drift', statistic: 'psi', above: 0.3, clearBelow: 0.4 }] }, 'headroom.yaml: alerts.rules[0].clearBelow: must be below above (0.3)'],
    [{ rules: [{ name: 'r', kind: 'drift', statistic: 'chi2' }] }, 'headroom.yaml: alerts.rules[0].statistic: must be psi or ks'],
    [{ rules: [{ name: 'r', kind: 'spike' }] }, 'headroom.yaml: alerts.rules[0].kind: must be one of shareRise, earlyWarning or drift'],
    [{ rules: [{ name: 'r', kind: 'drift', statistic: 'ks', holdFor: 300 }] }, 'headroom.yaml: alerts.rules[0].holdFor: must be a duration with a unit'],
    [{ rules: [{ name: 'r', kind: 'drift', statistic: 'ks', holdTime: '5m' }] }, 'headroom.yaml: alerts.rules[0].holdTime: is not a setting here'],
    [{ rules: [{ name: '', kind: 'drift', statistic: 'ks' }] }, 'headroom.yaml: alerts.rules[0].name: must not be empty'],
  ])('%j', (value, expected) => {
    const lines = problems(value);
    expect(lines.some((l) => l.startsWith(expected))).toBe(true);
  });

  it('refuses a rule name used twice, naming the second and the first', () => {
    const lines = problems({ rules: [{ name: 'a', kind: 'drift', statistic: 'ks' }, { name: 'a', kind: 'drift', statistic: 'psi' }] });
    expect(lines).toEqual([expect.stringMatching(/^headroom\.yaml: alerts\.rules\[1\]\.name: repeats "a" \(rules\[0\]\.name\)/)]);
  });

  it('reports every problem at once', () => {
    expect(problems({ rules: [{ name: 'a', kind: 'shareRise' }, { name: 'b', kind: 'drift' }] })).toHaveLength(2);
  });
});

describe('checkAlertRules against the rest of the config', () => {
  const context = {
    models: [{ name: 'parcel-damage', thresholds: [0.1, 0.25], segmentKeys: ['line'] }],
    windows: [{ name: '5m' }, { name: '1h' }],
  };

  it('names the model, threshold, window and segment key a rule gets wrong', () => {
    const { rules } = parseAlertsSection({
      rules: [
        { name: 'a', kind: 'shareRise', model: 'parcel-damage', threshold: 0.2, window: '24h', segmentKey: 'site' },
        { name: 'b', kind: 'earlyWarning', model: 'tyre-check', threshold: 0.1 },
        { name: 'c', kind: 'earlyWarning', threshold: 0.1, segmentKey: 'line' },
      ],
    });
    const found: string[] = [];
    checkAlertRules(rules, context, (path, detail) => found.push(`${path.join('.')}: ${detail}`));
    expect(found).toEqual([
      expect.stringMatching(/^alerts\.rules\.0\.threshold: 0\.2 is not among the thresholds of "parcel-damage"/),
      expect.stringMatching(/^alerts\.rules\.0\.window: "24h" is not one of windows \(5m, 1h\)/),
      expect.stringMatching(/^alerts\.rules\.0\.segmentKey: "site" is not a segment key of "parcel-damage"/),
      expect.stringMatching(/^alerts\.rules\.1\.model: "tyre-check" is not in models\[\]/),
    ]);
  });
});
