/** What the Kafka benches share: sizes from the environment, and a broker (KAFKA_BROKERS, else the local jar broker). */
import { startLocalBroker } from '../kafka/broker.js';

/** A positive whole number from `name`, or `fallback` when it is unset or empty. */
export function envCount(name: string, fallback: number): number {
  const raw = process.env[name];
  if (raw === undefined || raw === '') return fallback;
  const n = Number(raw);
  if (!Number.isSafeInteger(n) || n < 1) throw new Error(`${name} must be a whole number >= 1, got ${JSON.stringify(raw)}`);
  return n;
}

export interface BenchBrokers {
  readonly brokers: string[];
  /** Stops the local broker this started; nothing for KAFKA_BROKERS. */
  stop(): Promise<void>;
}

export async function benchBrokers(): Promise<BenchBrokers> {
  if (process.env.KAFKA_BROKERS) return { brokers: process.env.KAFKA_BROKERS.split(','), stop: async () => undefined };
  const broker = await startLocalBroker();
  console.log(`local Apache Kafka ${broker.version} on ${broker.bootstrap}, ready in ${(broker.startMs / 1000).toFixed(1)} s`);
  return { brokers: [broker.bootstrap], stop: () => broker.stop() };
}
