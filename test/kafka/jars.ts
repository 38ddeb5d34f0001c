/**
 * The Apache Kafka broker jars, fetched once with Maven from test/kafka/pom.xml and cached under the
 * user's cache directory, so that a second run downloads nothing (and does not even start Maven).
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, readFileSync, readdirSync, renameSync, rmSync, writeFileSync } from 'node:fs';
import { homedir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { HeadroomError } from '../../src/errors.js';

const here = dirname(fileURLToPath(import.meta.url));
export const POM_PATH = join(here, 'pom.xml');
export const LOG4J_CONFIG_PATH = join(here, 'log4j2.xml');

/** The broker version pinned in pom.xml: the pom is the one place it is written. */
export function pinnedKafkaVersion(): string {
  const match = /<kafka\.version>([^<]+)<\/kafka\.version>/.exec(readFileSync(POM_PATH, 'utf8'));
  if (!match?.[1]) throw new HeadroomError('HR_ERR_HARNESS_KAFKA_START', `no <kafka.version> in ${POM_PATH}`);
  return match[1];
}

export function cacheRoot(): string {
  const base = process.env.XDG_CACHE_HOME && process.env.XDG_CACHE_HOME !== '' ? process.env.XDG_CACHE_HOME : join(homedir(), '.cache');
  return join(base, 'headroom');
}

export interface JarSet {
  readonly version: string;
  readonly dir: string;
  /** True when this call ran Maven; false when the cache already held the jars. */
  readonly downloaded: boolean;
}

const COMPLETE_MARKER = '.complete';

export function commandExists(command: string): boolean {
  return spawnSync('sh', ['-c', `command -v ${command}`], { stdio: 'ignore' }).status === 0;
}

export function javaMajorVersion(): number | undefined {
  const result = spawnSync('java', ['-version'], { encoding: 'utf8' });
  if (result.status !== 0) return undefined;
  const match = /version "(\d+)(?:\.(\d+))?/.exec(`${result.stderr}${result.stdout}`);
  if (!match?.[1]) return undefined;
  // Java 8 and older report "1.8"; from 9 on the first number is the major version.
  return match[1] === '1' ? Number(match[2]) : Number(match[1]);
}

/**
 * Returns the folder of broker jars, running `mvn dependency:copy-dependencies` only when the cache lacks
 * them. Maven writes into a temp folder that is renamed into place, so an interrupted download never
 * leaves a half-filled cache that a later run would trust.
 */
export function ensureKafkaJars(log: (line: string) => void = () => {}): JarSet {
  const version = pinnedKafkaVersion();
  const dir = join(cacheRoot(), `kafka-${version}`, 'libs');
  if (existsSync(join(dir, COMPLETE_MARKER))) return { version, dir, downloaded: false };
  if (!commandExists('mvn')) {
    throw new HeadroomError('HR_ERR_HARNESS_KAFKA_UNAVAILABLE', 'mvn is not on PATH; install Maven (Debian package maven) to fetch the broker jars');
  }
  const staging = `${dir}.partial-${process.pid}`;
  rmSync(staging, { recursive: true, force: true });
  mkdirSync(dirname(dir), { recursive: true });
  log(`fetching Apache Kafka ${version} broker jars with Maven into ${dir}`);
  const result = spawnSync(
    'mvn',
    ['-B', '-q', '-f', POM_PATH, 'dependency:copy-dependencies', `-DoutputDirectory=${staging}`, '-DincludeScope=runtime'],
    { encoding: 'utf8', maxBuffer: 64 * 1024 * 1024 },
  );
  if (result.status !== 0) {
    rmSync(staging, { recursive: true, force: true });
    const output = `${result.stdout ?? ''}${result.stderr ?? ''}`.split('\n').slice(-30).join('\n');
    throw new HeadroomError('HR_ERR_HARNESS_KAFKA_START', `mvn dependency:copy-dependencies failed (exit ${result.status}):\n${output}`);
  }
  const jars = readdirSync(staging).filter((name) => name.endsWith('.jar'));
  if (!jars.some((name) => name.startsWith(`kafka_2.13-${version}`))) {
    rmSync(staging, { recursive: true, force: true });
    throw new HeadroomError('HR_ERR_HARNESS_KAFKA_START', `Maven finished but no kafka_2.13-${version} jar is in ${staging}`);
  }
  writeFileSync(join(staging, COMPLETE_MARKER), `${jars.sort().join('\n')}\n`);
  rmSync(dir, { recursive: true, force: true });
  renameSync(staging, dir);
  return { version, dir, downloaded: true };
}
