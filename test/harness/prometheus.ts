/**
 * A real Prometheus (the Debian package's binary) on a temp data dir and a free port, scraping targets
 * the test names. Queried through its HTTP API, as dashboards and rules would be.
 */
import { spawn, spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { HeadroomError } from '../../src/errors.js';
import { freePort } from '../kafka/broker.js';
import { commandExists } from '../kafka/jars.js';

export function prometheusTools(): { available: boolean; missing: string[] } {
  const missing = ['prometheus', 'promtool'].filter((tool) => !commandExists(tool));
  return { available: missing.length === 0, missing };
}

export function prometheusVersion(): string {
  const out = spawnSync('prometheus', ['--version'], { encoding: 'utf8' });
  return /version (\S+)/.exec(`${out.stdout}${out.stderr}`)?.[1] ?? 'unknown';
}

export interface ScrapeTarget {
  readonly job: string;
  readonly address: string; // host:port
  readonly metricsPath?: string;
}

export interface RunningPrometheus {
  readonly url: string;
  /** GET /api/v1/query; throws unless Prometheus answers status "success". */
  query(expr: string, timeSeconds?: number): Promise<PromVectorResult[]>;
  /** GET /api/v1/query_range (times in seconds); throws unless Prometheus answers status "success". */
  queryRange(expr: string, startSeconds: number, endSeconds: number, stepSeconds: number): Promise<PromMatrixResult[]>;
  /** Polls until `accept` holds for the query's answer, or throws with the last answer. */
  waitFor(expr: string, accept: (result: PromVectorResult[]) => boolean, timeoutMs?: number): Promise<PromVectorResult[]>;
  stop(): Promise<void>;
}

export interface PromVectorResult {
  readonly metric: Record<string, string>;
  readonly value: [number, string];
}

export interface PromMatrixResult {
  readonly metric: Record<string, string>;
  readonly values: [number, string][];
}

const sleep = (ms: number): Promise<void> => new Promise((resolve) => setTimeout(resolve, ms));

export interface PrometheusOptions {
  readonly scrapeIntervalS?: number;
  readonly extraArgs?: string[];
  /** Rule files to load (`rule_files`), evaluated every scrape interval; absolute paths. */
  readonly ruleFiles?: readonly string[];
  /**
   * Start on this TSDB directory (e.g. blocks made by `promtool tsdb create-blocks-from`) instead of an
   * empty temp one; it is the caller's, and is left in place at stop().
   */
  readonly dataDir?: string;
}

export async function startPrometheus(targets: readonly ScrapeTarget[], options: PrometheusOptions = {}): Promise<RunningPrometheus> {
  const dir = mkdtempSync(join(tmpdir(), 'headroom-prometheus-'));
  const port = await freePort();
  const interval = options.scrapeIntervalS ?? 1;
  const scrapeConfigs = targets
    .map((t) => `  - job_name: ${JSON.stringify(t.job)}\n    metrics_path: ${JSON.stringify(t.metricsPath ?? '/metrics')}\n    static_configs:\n      - targets: [${JSON.stringify(t.address)}]`)
    .join('\n');
  const ruleFiles = (options.ruleFiles ?? []).map((f) => `  - ${JSON.stringify(f)}`).join('\n');
  writeFileSync(
    join(dir, 'prometheus.yml'),
    `global:\n  scrape_interval: ${interval}s\n  evaluation_interval: ${interval}s\n${ruleFiles === '' ? '' : `rule_files:\n${ruleFiles}\n`}scrape_configs:${targets.length === 0 ? ' []' : `\n${scrapeConfigs}`}\n`,
  );
  const child = spawn(
    'prometheus',
    [`--config.file=${join(dir, 'prometheus.yml')}`, `--storage.tsdb.path=${options.dataDir ?? join(dir, 'data')}`, `--web.listen-address=127.0.0.1:${port}`, ...(options.extraArgs ?? [])],
    { stdio: ['ignore', 'ignore', 'pipe'] },
  );
  let stderr = '';
  child.stderr?.on('data', (chunk: Buffer) => (stderr = (stderr + chunk.toString()).slice(-8_000)));
  let exited = false;
  const exitPromise = new Promise<void>((resolve) => child.once('exit', () => ((exited = true), resolve())));
  const killOnExit = (): void => void (exited || child.kill('SIGKILL'));
  process.once('exit', killOnExit);
  const url = `http://127.0.0.1:${port}`;

  let stopping: Promise<void> | undefined;
  const stop = (): Promise<void> => {
    stopping ??= (async () => {
      if (!exited) {
        child.kill('SIGTERM');
        const timer = setTimeout(() => child.kill('SIGKILL'), 10_000);
        await exitPromise;
        clearTimeout(timer);
      }
      process.removeListener('exit', killOnExit);
      rmSync(dir, { recursive: true, force: true });
    })();
    return stopping;
  };

  const query = async (expr: string, timeSeconds?: number): Promise<PromVectorResult[]> => {
    const params = new URLSearchParams({ query: expr });
    if (timeSeconds !== undefined) params.set('time', String(timeSeconds));
    const response = await fetch(`${url}/api/v1/query?${params.toString()}`);
    const body = (await response.json()) as { status: string; error?: string; data?: { resultType: string; result: PromVectorResult[] } };
    if (body.status !== 'success' || !body.data) throw new Error(`Prometheus query ${expr} failed: ${body.error ?? response.status}`);
    return body.data.result;
  };

  const queryRange = async (expr: string, startSeconds: number, endSeconds: number, stepSeconds: number): Promise<PromMatrixResult[]> => {
    const params = new URLSearchParams({ query: expr, start: String(startSeconds), end: String(endSeconds), step: String(stepSeconds) });
    const response = await fetch(`${url}/api/v1/query_range?${params.toString()}`);
    const body = (await response.json()) as { status: string; error?: string; data?: { resultType: string; result: PromMatrixResult[] } };
    if (body.status !== 'success' || !body.data) throw new Error(`Prometheus range query ${expr} failed: ${body.error ?? response.status}`);
    return body.data.result;
  };

  const waitFor = async (expr: string, accept: (result: PromVectorResult[]) => boolean, timeoutMs = 30_000): Promise<PromVectorResult[]> => {
    const deadline = performance.now() + timeoutMs;
    let last: PromVectorResult[] = [];
    while (performance.now() < deadline) {
      last = await query(expr);
      if (accept(last)) return last;
      await sleep(250);
    }
    throw new Error(`Prometheus never answered ${expr} as expected within ${timeoutMs} ms; last answer ${JSON.stringify(last)}`);
  };

  const deadline = performance.now() + 30_000;
  while (performance.now() < deadline && !exited) {
    try {
      if ((await fetch(`${url}/-/ready`)).ok) return { url, query, queryRange, waitFor, stop };
    } catch {
      // not listening yet
    }
    await sleep(200);
  }
  await stop();
  throw new HeadroomError('HR_ERR_HARNESS_PROMETHEUS_UNAVAILABLE', `Prometheus did not become ready on ${url}: ${stderr.split('\n').slice(-10).join('\n')}`);
}
