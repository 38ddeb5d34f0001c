/**
 * Proves the Prometheus under the tests is a real one: it scrapes a tiny express /metrics endpoint backed
 * by a prom-client Registry of our own, and answers an instant query with the value we set.
 */
import express from 'express';
import type { Server } from 'node:http';
import { Counter, Registry } from 'prom-client';
import { afterAll, describe, expect, inject, it } from 'vitest';
import { startPrometheus, type RunningPrometheus } from '../harness/prometheus.js';

describe.skipIf(!inject('prometheusAvailable'))('the test harness Prometheus', () => {
  let server: Server | undefined;
  let prometheus: RunningPrometheus | undefined;

  afterAll(async () => {
    await prometheus?.stop();
    await new Promise<void>((resolve) => (server ? server.close(() => resolve()) : resolve()));
  });

  it('scrapes an express /metrics endpoint and answers an instant query for it', async () => {
    const registry = new Registry();
    const counter = new Counter({ name: 'headroom_harness_probe_total', help: 'Probe counter for the harness test.', labelNames: ['line'], registers: [registry] });
    counter.inc({ line: '2' }, 4242);
    const app = express();
    app.get('/metrics', async (_req, res) => {
      res.type(registry.contentType).send(await registry.metrics());
    });
    server = await new Promise<Server>((resolve) => {
      const s = app.listen(0, '127.0.0.1', () => resolve(s));
    });
    const address = server.address();
    if (typeof address !== 'object' || address === null) throw new Error('no address');

    prometheus = await startPrometheus([{ job: 'harness', address: `127.0.0.1:${address.port}` }]);
    const result = await prometheus.waitFor('headroom_harness_probe_total{line="2"}', (r) => r.length === 1);
    expect(result[0]?.metric.job).toBe('harness');
    expect(Number(result[0]?.value[1])).toBe(4242);
    const up = await prometheus.query('up{job="harness"}');
    expect(Number(up[0]?.value[1])).toBe(1);
  });
});
