/**
 * What the local test broker is started with: its ports, server.properties, the JVM command lines of
 * StorageTool and kafka.Kafka, and the optional SCRAM listener. Pure apart from freePort.
 */
import { randomBytes } from 'node:crypto';
import { createServer } from 'node:net';
import { join } from 'node:path';
import { LOG4J_CONFIG_PATH } from './jars.js';

/** A SASL_PLAINTEXT listener beside the plain one, with one SCRAM-SHA-512 user written at format time. */
export interface ScramListenerOptions {
  readonly username: string;
  readonly password: string;
}

export interface BrokerPorts {
  readonly broker: number;
  readonly controller: number;
  /** Set when the SCRAM listener is on. */
  readonly sasl?: number;
}

/** The listener's name in server.properties; Kafka lower-cases it in `listener.name.<name>.` keys. */
const SASL_LISTENER = 'SASL_PLAINTEXT';
export const SCRAM_MECHANISM = 'SCRAM-SHA-512';

export async function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const server = createServer();
    server.unref();
    server.on('error', reject);
    server.listen(0, '127.0.0.1', () => {
      const address = server.address();
      server.close(() => (typeof address === 'object' && address ? resolve(address.port) : reject(new Error('no port'))));
    });
  });
}

/**
 * Kafka's cluster id: 16 random bytes, URL-safe base64 without padding (what StorageTool random-uuid
 * prints). One in 64 starts with '-', which StorageTool's argument parser takes for an option; draw again.
 */
export function clusterId(): string {
  for (;;) {
    const id = randomBytes(16).toString('base64url');
    if (!id.startsWith('-')) return id;
  }
}

export function serverProperties(dataDir: string, ports: BrokerPorts, extra: Readonly<Record<string, string>>): string {
  const { broker, controller, sasl } = ports;
  const saslListener = sasl === undefined ? '' : `,${SASL_LISTENER}://127.0.0.1:${sasl}`;
  const props: Record<string, string> = {
    'process.roles': 'broker,controller',
    'node.id': '1',
    listeners: `PLAINTEXT://127.0.0.1:${broker}${saslListener},CONTROLLER://127.0.0.1:${controller}`,
    'advertised.listeners': `PLAINTEXT://127.0.0.1:${broker}${saslListener}`,
    'listener.security.protocol.map': `PLAINTEXT:PLAINTEXT,CONTROLLER:PLAINTEXT${sasl === undefined ? '' : `,${SASL_LISTENER}:SASL_PLAINTEXT`}`,
    'controller.listener.names': 'CONTROLLER',
    // Replication and the controller stay on plain listeners: only clients that ask for SASL use it.
    'inter.broker.listener.name': 'PLAINTEXT',
    'controller.quorum.bootstrap.servers': `127.0.0.1:${controller}`,
    'log.dirs': join(dataDir, 'logs'),
    'num.partitions': '1',
    'offsets.topic.replication.factor': '1',
    'offsets.topic.num.partitions': '4',
    'transaction.state.log.replication.factor': '1',
    'transaction.state.log.min.isr': '1',
    'share.coordinator.state.topic.replication.factor': '1',
    'share.coordinator.state.topic.min.isr': '1',
    'default.replication.factor': '1',
    'min.insync.replicas': '1',
    'group.initial.rebalance.delay.ms': '0',
    'auto.create.topics.enable': 'true',
    'log.flush.interval.messages': '9223372036854775807',
    ...(sasl === undefined
      ? {}
      : {
          'sasl.enabled.mechanisms': SCRAM_MECHANISM,
          [`listener.name.${SASL_LISTENER.toLowerCase()}.sasl.enabled.mechanisms`]: SCRAM_MECHANISM,
          [`listener.name.${SASL_LISTENER.toLowerCase()}.${SCRAM_MECHANISM.toLowerCase()}.sasl.jaas.config`]:
            'org.apache.kafka.common.security.scram.ScramLoginModule required;',
        }),
    ...extra,
  };
  return `${Object.entries(props).map(([key, value]) => `${key}=${value}`).join('\n')}\n`;
}

/** StorageTool's arguments; the SCRAM user goes into the bootstrap metadata, so it exists from the first start. */
export function formatArgs(propertiesFile: string, scram: ScramListenerOptions | undefined): string[] {
  // StorageTool splits `[name=...,password=...]` on ',', '=' and ']': keep the test credentials plain.
  for (const [field, value] of scram === undefined ? [] : [['username', scram.username], ['password', scram.password]] as const) {
    if (!/^[A-Za-z0-9._-]+$/.test(value)) throw new Error(`scram.${field}: the test broker takes letters, digits, '.', '_' and '-' only`);
  }
  const args = ['format', '-t', clusterId(), '-c', propertiesFile, '--standalone'];
  if (scram !== undefined) args.push('--add-scram', `${SCRAM_MECHANISM}=[name=${scram.username},password=${scram.password}]`);
  return args;
}

export function javaArgs(jarsDir: string, dataDir: string, heapMb: number, mainClass: string, args: string[]): string[] {
  return [
    `-Xms${Math.min(256, heapMb)}m`,
    `-Xmx${heapMb}m`,
    '-XX:+UseG1GC',
    '-XX:TieredStopAtLevel=1',
    '-Djava.awt.headless=true',
    `-Dlog4j2.configurationFile=${LOG4J_CONFIG_PATH}`,
    `-Dkafka.logs.dir=${dataDir}`,
    '-cp',
    `${jarsDir}/*`,
    mainClass,
    ...args,
  ];
}
