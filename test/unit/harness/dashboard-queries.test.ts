/** The helpers that turn dashboard and rule expressions into queries the integration test can run. */
import { describe, expect, it } from 'vitest';
import { boolForm, ruleExpressions, ruleFiles, substitute } from '../../harness/dashboard-queries.js';

describe('boolForm', () => {
  it('turns each filtering comparison into its bool form', () => {
    expect(boolForm('up{job="headroom"} == 0')).toBe('up{job="headroom"} == bool 0');
    expect(boolForm('a > 0.25 and b >= 200')).toBe('a > bool 0.25 and b >= bool 200');
    expect(boolForm('x<1')).toBe('x< bool 1');
    expect(boolForm('a <= b != c')).toBe('a <= bool b != bool c');
  });

  it('keeps comparisons that already say bool, and group modifiers after them', () => {
    expect(boolForm('a > bool 1')).toBe('a > bool 1');
    expect(boolForm('a > ignoring(window) group_left() b')).toBe('a > bool ignoring(window) group_left() b');
  });

  it('leaves label matchers and strings alone', () => {
    expect(boolForm('x{segment!="all",model=~"a>b",v="1==1"} > 1')).toBe('x{segment!="all",model=~"a>b",v="1==1"} > bool 1');
    expect(boolForm('label_replace(x, "d", "<$1>", "s", "(.*)")')).toBe('label_replace(x, "d", "<$1>", "s", "(.*)")');
    expect(boolForm('rate(x[5m]) / y')).toBe('rate(x[5m]) / y');
  });
});

describe('substitute', () => {
  it('replaces $name, ${name} and ${name:format}', () => {
    expect(substitute('x{model="$model",v="${version}",w="${window:raw}"}[$__rate_interval]', { model: 'm', version: '2', window: '5m', __rate_interval: '1m' })).toBe(
      'x{model="m",v="2",w="5m"}[1m]',
    );
  });

  it('refuses a variable it has no value for', () => {
    expect(() => substitute('x{a="$nope"}', {})).toThrow(/\$nope/);
  });
});

describe('ruleExpressions', () => {
  it('finds every recording and alerting rule of the rules file', () => {
    expect(ruleFiles()).toEqual(['headroom-rules.yml']);
    const rules = ruleExpressions('headroom-rules.yml');
    expect(rules.filter((r) => r.kind === 'record').map((r) => r.name)).toContain('headroom:low_margin_ratio:wilson_lower95');
    expect(rules.filter((r) => r.kind === 'alert').map((r) => r.name)).toContain('HeadroomLowMarginShareRise');
    for (const r of rules) expect(r.expr.length, r.where).toBeGreaterThan(0);
  });
});
