/**
 * dashboards/headroom-rules.yml through the real promtool: `check rules` accepts it, `test rules` passes
 * the unit tests beside it, those tests show every alert both firing and quiet, and they notice a rule
 * whose threshold or hold time is changed.
 */
import { spawnSync } from 'node:child_process';
import { copyFileSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { parse } from 'yaml';
import { afterAll, describe, expect, inject, it } from 'vitest';
import { DASHBOARDS_DIR, ruleExpressions } from '../harness/dashboard-queries.js';

const RULES = 'headroom-rules.yml';
const TESTS = 'headroom-rules.test.yml';

function promtool(args: string[], cwd: string): { status: number | null; output: string } {
  const run = spawnSync('promtool', args, { cwd, encoding: 'utf8', timeout: 60_000 });
  return { status: run.status, output: `${run.stdout}${run.stderr}` };
}

interface AlertTest {
  readonly alertname: string;
  readonly exp_alerts?: readonly unknown[];
}

describe.skipIf(!inject('prometheusAvailable'))('the Prometheus rules in dashboards/', () => {
  const scratch = mkdtempSync(join(tmpdir(), 'headroom-rules-'));
  afterAll(() => rmSync(scratch, { recursive: true, force: true }));

  it('promtool check rules accepts every rule', () => {
    const { status, output } = promtool(['check', 'rules', RULES], DASHBOARDS_DIR);
    expect(status, output).toBe(0);
    expect(output).toContain(`SUCCESS: ${ruleExpressions(RULES).length} rules found`);
  });

  it('promtool test rules passes', () => {
    const { status, output } = promtool(['test', 'rules', TESTS], DASHBOARDS_DIR);
    expect(status, output).toBe(0);
    expect(output).toContain('SUCCESS');
  });

  it('the tests show every alert firing and, at another time or on other series, quiet', () => {
    const doc = parse(readFileSync(join(DASHBOARDS_DIR, TESTS), 'utf8')) as { tests: { alert_rule_test?: AlertTest[] }[] };
    const cases = doc.tests.flatMap((t) => t.alert_rule_test ?? []);
    for (const alert of ruleExpressions(RULES).filter((r) => r.kind === 'alert')) {
      const own = cases.filter((c) => c.alertname === alert.name);
      expect(own.some((c) => (c.exp_alerts ?? []).length > 0), `${alert.name} fires in some test`).toBe(true);
      expect(own.some((c) => (c.exp_alerts ?? []).length === 0), `${alert.name} is quiet in some test`).toBe(true);
    }
  });

  // A rule changed behind the tests' back must make them fail: proof that they test these rules.
  const changes: readonly (readonly [string, string, string])[] = [
    ['a shorter hold time', 'for: 15m', 'for: 5m'],
    ['a lower minimum count', '>= 200', '>= 100'],
    ['the point share instead of its lower bound', 'headroom:low_margin_ratio:wilson_lower95{window="1h"}', 'headroom_low_margin_ratio{window="1h"}'],
    ['a higher PSI threshold', 'headroom_drift_psi{window="1h"} > 0.25', 'headroom_drift_psi{window="1h"} > 0.3'],
    ['a lower rejection share', '> 0.05', '> 0.005'],
  ];
  for (const [what, from, to] of changes) {
    it(`promtool test rules fails for ${what}`, () => {
      const original = readFileSync(join(DASHBOARDS_DIR, RULES), 'utf8');
      expect(original).toContain(from);
      writeFileSync(join(scratch, RULES), original.replaceAll(from, to));
      copyFileSync(join(DASHBOARDS_DIR, TESTS), join(scratch, TESTS));
      const { status, output } = promtool(['test', 'rules', TESTS], scratch);
      expect(status, output).not.toBe(0);
      expect(output).toContain('FAILED');
    });
  }
});
