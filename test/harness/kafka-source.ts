/**
 * Where the integration tests get a real broker, in this order:
 *   1. KAFKA_BROKERS from the environment (an existing cluster, comma-separated host:port list);
 *   2. a Docker engine, through @testcontainers/kafka;
 *   3. the local jar broker from test/kafka (needs java >= 17 and mvn);
 * else one error naming the three ways.
 */
import { existsSync } from 'node:fs';
import { HeadroomError } from '../../src/errors.js';
import { startLocalBroker } from '../kafka/broker.js';
import { commandExists, javaMajorVersion } from '../kafka/jars.js';

export interface BrokerHandle {
  readonly brokers: string;
  readonly how: 'environment' | 'docker' | 'local-jars';
  readonly description: string;
  stop(): Promise<void>;
}

// Confluent's community image line 8.1 carries Apache Kafka 4.1, the version test/kafka/pom.xml pins.
const DOCKER_IMAGE = 'confluentinc/cp-kafka:8.1.0';

function dockerEngineLikely(): boolean {
  return (process.env.DOCKER_HOST ?? '') !== '' || existsSync('/var/run/docker.sock');
}

async function startDockerBroker(): Promise<BrokerHandle> {
  const { KafkaContainer } = await import('@testcontainers/kafka');
  const container = await new KafkaContainer(DOCKER_IMAGE).start();
  const brokers = `${container.getHost()}:${container.getMappedPort(9093)}`;
  return { brokers, how: 'docker', description: `${DOCKER_IMAGE} through testcontainers`, stop: async () => void (await container.stop()) };
}

/** Why the local jar broker cannot be started here (java >= 17 and mvn are needed), or undefined if it can. */
export function localBrokerMissing(): string | undefined {
  const java = javaMajorVersion();
  if (java === undefined || java < 17) return java === undefined ? 'java is not on PATH' : `java ${java} is older than 17`;
  if (!commandExists('mvn')) return 'mvn is not on PATH';
  return undefined;
}

export async function acquireBroker(log: (line: string) => void): Promise<BrokerHandle> {
  const fromEnv = (process.env.KAFKA_BROKERS ?? '').trim();
  if (fromEnv !== '') {
    return { brokers: fromEnv, how: 'environment', description: `KAFKA_BROKERS=${fromEnv}`, stop: async () => {} };
  }
  const reasons: string[] = ['KAFKA_BROKERS is not set'];
  if (dockerEngineLikely()) {
    try {
      return await startDockerBroker();
    } catch (error) {
      reasons.push(`Docker/testcontainers failed: ${error instanceof Error ? error.message : String(error)}`);
    }
  } else {
    reasons.push('no Docker engine (no DOCKER_HOST, no /var/run/docker.sock)');
  }
  const missing = localBrokerMissing();
  if (missing !== undefined) reasons.push(missing);
  else {
    const broker = await startLocalBroker({ log });
    return {
      brokers: broker.bootstrap,
      how: 'local-jars',
      description: `local Apache Kafka ${broker.version} (jars via Maven), ready in ${(broker.startMs / 1000).toFixed(1)} s`,
      stop: broker.stop,
    };
  }
  throw new HeadroomError(
    'HR_ERR_HARNESS_KAFKA_UNAVAILABLE',
    `the integration tests need a real Kafka broker and found none (${reasons.join('; ')}). Give them one of: ` +
      '(1) KAFKA_BROKERS=host:port of a running cluster; (2) a Docker engine, for @testcontainers/kafka; ' +
      '(3) java >= 17 and mvn on PATH, for the local broker in test/kafka (the jars are fetched from Maven Central once).',
  );
}
