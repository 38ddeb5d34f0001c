/**
 * A real single-node Apache Kafka (KRaft, broker and controller in one JVM) on 127.0.0.1, started from
 * the Maven-fetched jars in a fresh temp folder. Used by the test harness and by `npm run kafka:local`.
 */
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { randomBytes } from 'node:crypto';
import { existsSync, mkdirSync, mkdtempSync, readFileSync, readdirSync, rmSync, unlinkSync, writeFileSync } from 'node:fs';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { HeadroomError } from '../../src/errors.js';
import { cacheRoot, ensureKafkaJars, LOG4J_CONFIG_PATH } from './jars.js';
import { waitUntilUsable } from './readiness.js';

export interface LocalBroker {
  readonly bootstrap: string;
  readonly version: string;
  readonly dataDir: string;
  readonly pid: number;
  /** Milliseconds from spawning the JVM until a consumer group could join. */
  readonly startMs: number;
  /** Idempotent: SIGTERM, then SIGKILL if the broker has not exited within the grace period. */
  stop(): Promise<void>;
}

export interface LocalBrokerOptions {
  readonly log?: (line: string) => void;
  readonly startTimeoutMs?: number;
  readonly stopGraceMs?: number;
  readonly heapMb?: number;
  /** Extra server.properties lines (later issues add a SASL listener this way). */
  readonly extraProperties?: Readonly<Record<string, string>>;
}

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
function clusterId(): string {
  for (;;) {
    const id = randomBytes(16).toString('base64url');
    if (!id.startsWith('-')) return id;
  }
}

function serverProperties(dataDir: string, brokerPort: number, controllerPort: number, extra: Readonly<Record<string, string>>): string {
  const props: Record<string, string> = {
    'process.roles': 'broker,controller',
    'node.id': '1',
    listeners: `PLAINTEXT://127.0.0.1:${brokerPort},CONTROLLER://127.0.0.1:${controllerPort}`,
    'advertised.listeners': `PLAINTEXT://127.0.0.1:${brokerPort}`,
    'listener.security.protocol.map': 'PLAINTEXT:PLAINTEXT,CONTROLLER:PLAINTEXT',
    'controller.listener.names': 'CONTROLLER',
    'inter.broker.listener.name': 'PLAINTEXT',
    'controller.quorum.bootstrap.servers': `127.0.0.1:${controllerPort}`,
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
    ...extra,
  };
  return `${Object.entries(props).map(([key, value]) => `${key}=${value}`).join('\n')}\n`;
}

function javaArgs(jarsDir: string, dataDir: string, heapMb: number, mainClass: string, args: string[]): string[] {
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

// A broker whose owner died (a SIGKILLed test run) would keep its ports and memory forever. Each start
// writes its pid and its owner's pid here, and sweeps out brokers whose owner is gone.
function registryDir(): string {
  return join(cacheRoot(), 'running-brokers');
}

function isAlive(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch {
    return false;
  }
}

function isOurBroker(pid: number): boolean {
  try {
    return readFileSync(`/proc/${pid}/cmdline`, 'utf8').includes('kafka.Kafka');
  } catch {
    return false;
  }
}

export function sweepOrphanedBrokers(log: (line: string) => void = () => {}): number {
  const dir = registryDir();
  if (!existsSync(dir)) return 0;
  let killed = 0;
  for (const name of readdirSync(dir)) {
    const file = join(dir, name);
    try {
      const entry = JSON.parse(readFileSync(file, 'utf8')) as { brokerPid: number; ownerPid: number; dataDir: string };
      if (isAlive(entry.ownerPid) && entry.ownerPid !== process.pid) continue;
      if (isAlive(entry.brokerPid) && isOurBroker(entry.brokerPid)) {
        process.kill(entry.brokerPid, 'SIGKILL');
        killed += 1;
        log(`killed orphaned test broker pid ${entry.brokerPid}`);
      }
      rmSync(entry.dataDir, { recursive: true, force: true });
    } catch {
      // A half-written entry from a crashed run: drop it.
    }
    rmSync(file, { force: true });
  }
  return killed;
}

function tail(file: string, lines: number): string {
  try {
    return readFileSync(file, 'utf8').split('\n').slice(-lines).join('\n');
  } catch {
    return '(no broker log)';
  }
}

export async function startLocalBroker(options: LocalBrokerOptions = {}): Promise<LocalBroker> {
  const log = options.log ?? (() => {});
  const heapMb = options.heapMb ?? 768;
  sweepOrphanedBrokers(log);
  const jars = ensureKafkaJars(log);
  const dataDir = mkdtempSync(join(tmpdir(), 'headroom-kafka-'));
  const [brokerPort, controllerPort] = [await freePort(), await freePort()];
  const propertiesFile = join(dataDir, 'server.properties');
  writeFileSync(propertiesFile, serverProperties(dataDir, brokerPort, controllerPort, options.extraProperties ?? {}));

  const format = spawnSync(
    'java',
    javaArgs(jars.dir, dataDir, 256, 'kafka.tools.StorageTool', ['format', '-t', clusterId(), '-c', propertiesFile, '--standalone']),
    { encoding: 'utf8' },
  );
  if (format.status !== 0) {
    rmSync(dataDir, { recursive: true, force: true });
    throw new HeadroomError('HR_ERR_HARNESS_KAFKA_START', `StorageTool format failed (exit ${format.status}): ${format.stderr}${format.stdout}`);
  }

  const started = performance.now();
  const child: ChildProcess = spawn('java', javaArgs(jars.dir, dataDir, heapMb, 'kafka.Kafka', [propertiesFile]), {
    stdio: ['ignore', 'ignore', 'pipe'],
  });
  child.stderr?.on('data', (chunk: Buffer) => log(chunk.toString().trimEnd()));
  const pid = child.pid ?? -1;
  mkdirSync(registryDir(), { recursive: true });
  const registryFile = join(registryDir(), `${pid}.json`);
  writeFileSync(registryFile, JSON.stringify({ brokerPid: pid, ownerPid: process.pid, dataDir }));

  let exited = false;
  const exitPromise = new Promise<void>((resolve) => child.once('exit', () => ((exited = true), resolve())));
  // If this process exits without calling stop() (an uncaught error, process.exit), take the broker along.
  const killOnExit = (): void => {
    if (!exited) child.kill('SIGKILL');
  };
  process.once('exit', killOnExit);

  let stopping: Promise<void> | undefined;
  const stop = (): Promise<void> => {
    stopping ??= (async () => {
      if (!exited) {
        child.kill('SIGTERM');
        const grace = new Promise<'timeout'>((resolve) => setTimeout(() => resolve('timeout'), options.stopGraceMs ?? 20_000).unref());
        if ((await Promise.race([exitPromise.then(() => 'exited' as const), grace])) === 'timeout') {
          log(`broker pid ${pid} did not stop within the grace period; killing it`);
          child.kill('SIGKILL');
          await exitPromise;
        }
      }
      process.removeListener('exit', killOnExit);
      try {
        unlinkSync(registryFile);
      } catch {
        // already swept
      }
      rmSync(dataDir, { recursive: true, force: true });
    })();
    return stopping;
  };

  const bootstrap = `127.0.0.1:${brokerPort}`;
  try {
    await Promise.race([
      waitUntilUsable(bootstrap, options.startTimeoutMs ?? 90_000),
      exitPromise.then(() => {
        throw new HeadroomError('HR_ERR_HARNESS_KAFKA_START', `broker exited during start-up; last log lines:\n${tail(join(dataDir, 'server.log'), 40)}`);
      }),
    ]);
  } catch (error) {
    const logTail = tail(join(dataDir, 'server.log'), 40);
    await stop();
    if (error instanceof HeadroomError) throw error;
    throw new HeadroomError('HR_ERR_HARNESS_KAFKA_START', `broker on ${bootstrap} did not become usable: ${String(error)}\n${logTail}`, { cause: error });
  }
  return { bootstrap, version: jars.version, dataDir, pid, startMs: performance.now() - started, stop };
}
