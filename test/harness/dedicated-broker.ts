/**
 * For test files that need a broker of their own (a SCRAM listener, a restart) rather than the shared
 * one: that needs the local jar broker. Under CI its absence fails the file; elsewhere the file is
 * skipped and says why, as the Prometheus tests do.
 */
import { HeadroomError } from '../../src/errors.js';
import { localBrokerMissing } from './kafka-source.js';

/** Undefined when a dedicated local broker can be started; else the reason the caller's tests are skipped. */
export function dedicatedBrokerUnavailable(file: string): string | undefined {
  const missing = localBrokerMissing();
  if (missing === undefined) return undefined;
  const message = `${file} needs its own local broker (java >= 17 and mvn): ${missing}`;
  if (process.env.CI === 'true' || process.env.CI === '1') throw new HeadroomError('HR_ERR_HARNESS_KAFKA_UNAVAILABLE', `${message}; under CI this is a failure, not a skip`);
  process.stderr.write(`[harness] ${message}: skipped\n`);
  return message;
}
