/**
 * vitest global setup for the `integration` project: one real broker for the whole run, and a check that
 * Prometheus is there. Under CI (CI=true) a missing broker or missing prometheus/promtool fails the run;
 * on a developer's machine a missing Prometheus only skips the tests that need it (they say so).
 */
import type { TestProject } from 'vitest/node';
import { HeadroomError } from '../../src/errors.js';
import { acquireBroker } from './kafka-source.js';
import { prometheusTools } from './prometheus.js';

declare module 'vitest' {
  export interface ProvidedContext {
    kafkaBrokers: string;
    kafkaHow: string;
    prometheusAvailable: boolean;
  }
}

const log = (line: string): void => void process.stderr.write(`[harness] ${line}\n`);

export default async function setup(project: TestProject): Promise<() => Promise<void>> {
  const ci = process.env.CI === 'true' || process.env.CI === '1';
  const prometheus = prometheusTools();
  if (!prometheus.available) {
    const message = `${prometheus.missing.join(' and ')} not on PATH (Debian package prometheus)`;
    if (ci) throw new HeadroomError('HR_ERR_HARNESS_PROMETHEUS_UNAVAILABLE', `${message}; under CI this is a failure, not a skip`);
    log(`${message}: the tests that need a real Prometheus will be skipped`);
  }
  const broker = await acquireBroker(log);
  log(`Kafka for this run: ${broker.description} at ${broker.brokers}`);
  project.provide('kafkaBrokers', broker.brokers);
  project.provide('kafkaHow', broker.how);
  project.provide('prometheusAvailable', prometheus.available);
  return async () => {
    await broker.stop();
  };
}
