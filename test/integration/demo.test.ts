/**
 * `headroom demo` as a child process, at --speed 60: embedded (no broker) and with --kafka against the
 * harness broker. It prints its URLs; /api/series shows the three lines; /api/alerts shows line 3 firing
 * while lines 1 and 2 stay calm; SIGTERM (or --duration) ends it with exit 0.
 */
import { describe, expect, inject, it } from 'vitest';
import { spawnHeadroom } from '../harness/cli.js';
import type { RunningCli } from '../harness/cli.js';
import { uniqueName } from '../harness/names.js';
import { until } from '../harness/wait.js';

interface AlertsJson {
  alerts: { rule: string; segment: string; phase: string }[];
}

async function getJson<T>(url: string): Promise<T> {
  const res = await fetch(url);
  expect(res.status, url).toBe(200);
  return (await res.json()) as T;
}

async function watchDemo(cli: RunningCli): Promise<void> {
  await until('the demo prints its URLs', () => /alerts: +http:\/\/127\.0\.0\.1:\d+\/api\/alerts/.test(cli.stdout()), 90_000);
  const base = /series: +(http:\/\/127\.0\.0\.1:\d+)\/api\/series/.exec(cli.stdout())?.[1] as string;
  expect(cli.stdout()).toMatch(/metrics: +http:\/\/127\.0\.0\.1:\d+\/metrics/);
  expect(cli.stdout()).toMatch(/line 3's camera starts to drift at 03:00 \(00:03 wall time\); expect an alert on line 3 by about/);
  await until('three lines in /api/series', async () => {
    const series = await getJson<{ series: { segment: string }[] }>(`${base}/api/series`);
    return ['line=1', 'line=2', 'line=3'].every((s) => series.series.some((x) => x.segment === s));
  }, 60_000);
  let alerts: AlertsJson | undefined;
  // Scenario time runs 60x: the announced 08:30 is under 9 s of wall time; the bound is generous for a shared machine.
  await until('line 3 firing in /api/alerts', async () => {
    alerts = await getJson<AlertsJson>(`${base}/api/alerts`);
    return alerts.alerts.filter((a) => a.segment === 'line=3' && a.phase === 'firing').length === 2;
  }, 90_000);
  const calm = alerts!.alerts.filter((a) => a.segment !== 'line=3');
  expect(calm.length).toBeGreaterThanOrEqual(4);
  for (const a of calm) expect(a, `${a.rule} on ${a.segment}`).toMatchObject({ phase: 'calm' });
  const metrics = await (await fetch(`${base}/metrics`)).text();
  expect(metrics).toMatch(/headroom_alert_firing\{[^}]*segment="line=3"[^}]*\} 1/);
  expect(metrics).toMatch(/headroom_events_total\{[^}]*segment="line=1"[^}]*\} [1-9]/);
}

describe('headroom demo', () => {
  it('embedded: line 3 fires, lines 1-2 stay calm, SIGTERM exits 0', async () => {
    const cli = spawnHeadroom(['demo', '--speed', '60', '--port', '0', '--duration', '2h']);
    try {
      await watchDemo(cli);
      cli.child.kill('SIGTERM');
      expect(await cli.exited, cli.output()).toBe(0);
      expect(cli.stdout()).toMatch(/stopped \(SIGTERM\).*alerts fired: .*line-early-warning on line=3/);
    } finally {
      cli.child.kill('SIGKILL');
    }
  }, 180_000);

  it('--duration ends the run by itself with exit 0', async () => {
    const cli = spawnHeadroom(['demo', '--speed', '120', '--port', '0', '--duration', '2m']);
    try {
      expect(await cli.exited, cli.output()).toBe(0);
      expect(cli.stdout()).toMatch(/stopped \(duration\) at 02:0\d of scenario time after \d+ parcels; alerts fired: none/);
    } finally {
      cli.child.kill('SIGKILL');
    }
  }, 120_000);

  it('--kafka: the scenario through the harness broker and the real watcher', async () => {
    const topic = uniqueName('demo-parcels');
    const cli = spawnHeadroom(['demo', '--speed', '60', '--port', '0', '--kafka', inject('kafkaBrokers'), '--topic', topic, '--duration', '2h']);
    try {
      await watchDemo(cli);
      expect(cli.stdout()).toContain(`producing to ${topic}`);
      cli.child.kill('SIGTERM');
      expect(await cli.exited, cli.output()).toBe(0);
    } finally {
      cli.child.kill('SIGKILL');
    }
  }, 240_000);
});
