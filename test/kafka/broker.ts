/**
 * A real single-node Apache Kafka (KRaft, broker and controller in one JVM) on 127.0.0.1, started from
 * the Maven-fetched jars in a fresh temp folder. Used by the test harness and by `npm run kafka:local`.
 * Optionally a second, SASL_PLAINTEXT listener with one SCRAM-SHA-512 user; and the JVM can be stopped
 * and started again on the same data and ports, for tests of a broker that goes away mid-stream.
 */
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { HeadroomError } from '../../src/errors.js';
import { formatArgs, freePort, javaArgs, SCRAM_MECHANISM, serverProperties } from './broker-config.js';
import type { BrokerPorts, ScramListenerOptions } from './broker-config.js';
import { registerBroker, sweepOrphanedBrokers, unregisterBroker } from './broker-registry.js';
import { ensureKafkaJars } from './jars.js';
import { waitUntilUsable, waitUntilScramWorks } from './readiness.js';

export { freePort } from './broker-config.js';
export type { ScramListenerOptions } from './broker-config.js';
export { sweepOrphanedBrokers } from './broker-registry.js';

export interface ScramListener {
  /** `127.0.0.1:PORT` of the SASL_PLAINTEXT listener. */
  readonly bootstrap: string;
  readonly mechanism: typeof SCRAM_MECHANISM;
  readonly username: string;
}

export interface LocalBroker {
  /** The plain listener: readiness probes, admin, and every client that does not ask for SASL. */
  readonly bootstrap: string;
  /** Present when started with `scram`. */
  readonly scram?: ScramListener;
  readonly version: string;
  readonly dataDir: string;
  /** The broker's own log (log4j2, appended to across restarts): e.g. its "Failed authentication" lines. */
  readonly logFile: string;
  /** The running JVM's pid; changes at every start, -1 while stopped. */
  readonly pid: number;
  /** Milliseconds from spawning the first JVM until a consumer group could join. */
  readonly startMs: number;
  /**
   * Stops the JVM (SIGTERM, SIGKILL after the grace period) but keeps its data dir and ports, so that
   * startProcess() brings back the same topics, messages and committed offsets. Idempotent.
   */
  stopProcess(): Promise<void>;
  /** Starts the JVM again on the same data and ports; resolves once usable, with the milliseconds that took. No-op if running. */
  startProcess(): Promise<number>;
  /** stopProcess() then startProcess(); resolves with the milliseconds the start took. */
  restart(): Promise<number>;
  /** Idempotent: stops the JVM as stopProcess() does, then removes the data dir. Final. */
  stop(): Promise<void>;
}

export interface LocalBrokerOptions {
  readonly log?: (line: string) => void;
  readonly startTimeoutMs?: number;
  readonly stopGraceMs?: number;
  readonly heapMb?: number;
  /** Adds a SASL_PLAINTEXT listener with this one SCRAM-SHA-512 user, created when the log dir is formatted. */
  readonly scram?: ScramListenerOptions;
  /** Extra server.properties lines. */
  readonly extraProperties?: Readonly<Record<string, string>>;
}

function tail(file: string, lines: number): string {
  try {
    return readFileSync(file, 'utf8').split('\n').slice(-lines).join('\n');
  } catch {
    return '(no broker log)';
  }
}

/** One JVM's life: spawned, registered under its pid, ended by SIGTERM (SIGKILL after the grace). */
interface Running {
  readonly pid: number;
  readonly exited: Promise<void>;
  hasExited(): boolean;
  end(graceMs: number): Promise<void>;
}

export async function startLocalBroker(options: LocalBrokerOptions = {}): Promise<LocalBroker> {
  const log = options.log ?? (() => {});
  const heapMb = options.heapMb ?? 768;
  const graceMs = options.stopGraceMs ?? 20_000;
  sweepOrphanedBrokers(log);
  const jars = ensureKafkaJars(log);
  const dataDir = mkdtempSync(join(tmpdir(), 'headroom-kafka-'));
  const logFile = join(dataDir, 'server.log');
  const ports: BrokerPorts = { broker: await freePort(), controller: await freePort(), ...(options.scram ? { sasl: await freePort() } : {}) };
  const propertiesFile = join(dataDir, 'server.properties');
  writeFileSync(propertiesFile, serverProperties(dataDir, ports, options.extraProperties ?? {}));

  const format = spawnSync('java', javaArgs(jars.dir, dataDir, 256, 'kafka.tools.StorageTool', formatArgs(propertiesFile, options.scram)), { encoding: 'utf8' });
  if (format.status !== 0) {
    rmSync(dataDir, { recursive: true, force: true });
    // StorageTool echoes no credentials, but the test password is taken out all the same.
    const said = `${format.stderr}${format.stdout}`.replaceAll(options.scram?.password ?? '\u0000', '[redacted]');
    throw new HeadroomError('HR_ERR_HARNESS_KAFKA_START', `StorageTool format failed (exit ${format.status}): ${said}`);
  }

  const bootstrap = `127.0.0.1:${ports.broker}`;
  const scram: ScramListener | undefined =
    options.scram && ports.sasl !== undefined ? { bootstrap: `127.0.0.1:${ports.sasl}`, mechanism: SCRAM_MECHANISM, username: options.scram.username } : undefined;

  const spawnJvm = (): Running => {
    const child: ChildProcess = spawn('java', javaArgs(jars.dir, dataDir, heapMb, 'kafka.Kafka', [propertiesFile]), { stdio: ['ignore', 'ignore', 'pipe'] });
    child.stderr?.on('data', (chunk: Buffer) => log(chunk.toString().trimEnd()));
    const pid = child.pid ?? -1;
    registerBroker(dataDir, pid);
    let gone = false;
    const exited = new Promise<void>((resolve) => child.once('exit', () => ((gone = true), resolve())));
    // If this process exits without stopping the broker (an uncaught error, process.exit), take it along.
    const killOnExit = (): void => {
      if (!gone) child.kill('SIGKILL');
    };
    process.once('exit', killOnExit);
    let ending: Promise<void> | undefined;
    const end = (ms: number): Promise<void> =>
      (ending ??= (async () => {
        if (!gone) {
          child.kill('SIGTERM');
          const grace = new Promise<'timeout'>((resolve) => setTimeout(() => resolve('timeout'), ms).unref());
          if ((await Promise.race([exited.then(() => 'exited' as const), grace])) === 'timeout') {
            log(`broker pid ${pid} did not stop within the grace period; killing it`);
            child.kill('SIGKILL');
            await exited;
          }
        }
        process.removeListener('exit', killOnExit);
      })());
    return { pid, exited, hasExited: () => gone, end };
  };

  /** Resolves once the broker (and its SCRAM listener, if any) is usable; on failure the JVM is ended and the error names the log's tail. */
  const untilUsable = async (jvm: Running): Promise<void> => {
    const timeoutMs = options.startTimeoutMs ?? 90_000;
    try {
      await Promise.race([
        (async () => {
          await waitUntilUsable(bootstrap, timeoutMs);
          if (scram !== undefined && options.scram) await waitUntilScramWorks(scram.bootstrap, options.scram, timeoutMs);
        })(),
        jvm.exited.then(() => {
          throw new HeadroomError('HR_ERR_HARNESS_KAFKA_START', `broker exited during start-up; last log lines:\n${tail(logFile, 40)}`);
        }),
      ]);
    } catch (error) {
      const logTail = tail(logFile, 40);
      await jvm.end(graceMs);
      if (error instanceof HeadroomError) throw error;
      throw new HeadroomError('HR_ERR_HARNESS_KAFKA_START', `broker on ${bootstrap} did not become usable: ${String(error)}\n${logTail}`, { cause: error });
    }
  };

  let jvm: Running | undefined = spawnJvm();
  let stopped = false;
  const started = performance.now();
  let startMs = 0;

  const stopProcess = async (): Promise<void> => {
    const current = jvm;
    if (current === undefined) return;
    await current.end(graceMs);
    if (jvm === current) jvm = undefined;
    // Still registered (pid -1): a dead owner's data dir is swept even while the JVM is down.
    if (!stopped) registerBroker(dataDir, -1);
  };

  let starting: Promise<number> | undefined;
  const startProcess = (): Promise<number> =>
    (starting ??= (async () => {
      if (stopped) throw new HeadroomError('HR_ERR_HARNESS_KAFKA_START', `broker on ${bootstrap} was stopped for good (stop()); start a new one`);
      if (jvm !== undefined && !jvm.hasExited()) return 0;
      const t0 = performance.now();
      const next = spawnJvm();
      jvm = next;
      try {
        await untilUsable(next);
      } catch (error) {
        if (jvm === next) jvm = undefined;
        throw error;
      }
      return performance.now() - t0;
    })().finally(() => (starting = undefined)));

  let stopping: Promise<void> | undefined;
  const stop = (): Promise<void> =>
    (stopping ??= (async () => {
      stopped = true;
      // Ending the JVM first makes a start still in progress fail at once instead of waiting out its timeout.
      await stopProcess();
      await starting?.catch(() => undefined);
      unregisterBroker(dataDir);
      rmSync(dataDir, { recursive: true, force: true });
    })());

  try {
    await untilUsable(jvm);
    startMs = performance.now() - started;
  } catch (error) {
    await stop();
    throw error;
  }

  return {
    bootstrap,
    ...(scram === undefined ? {} : { scram }),
    version: jars.version,
    dataDir,
    logFile,
    get pid() {
      return jvm?.pid ?? -1;
    },
    startMs,
    stopProcess,
    startProcess,
    restart: async () => {
      await stopProcess();
      return startProcess();
    },
    stop,
  };
}
