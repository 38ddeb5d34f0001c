/**
 * A broker whose owner died (a SIGKILLed test run) would keep its ports, memory and data dir forever.
 * Each local broker keeps one entry here, named after its data dir so it survives restarts: the entry
 * is rewritten with the new JVM's pid at every start, and stays while the JVM is down (its data dir is
 * still there to sweep). Every start sweeps out the brokers whose owner is gone.
 */
import { existsSync, mkdirSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { basename, join } from 'node:path';
import { cacheRoot } from './jars.js';

interface Entry {
  /** -1 while the JVM is stopped on purpose (stopProcess). */
  readonly brokerPid: number;
  readonly ownerPid: number;
  readonly dataDir: string;
}

/** Data dirs of the brokers this process runs: never swept, even if a dead owner's pid was reused by us. */
const ownedHere = new Set<string>();

function registryDir(): string {
  return join(cacheRoot(), 'running-brokers');
}

function entryFile(dataDir: string): string {
  return join(registryDir(), `${basename(dataDir)}.json`);
}

function isAlive(pid: number): boolean {
  if (pid <= 0) return false;
  try {
    process.kill(pid, 0);
    return true;
  } catch {
    return false;
  }
}

/** The pid is a broker JVM started on this data dir (a reused pid is someone else's process). */
function isBrokerOf(pid: number, dataDir: string): boolean {
  try {
    const cmdline = readFileSync(`/proc/${pid}/cmdline`, 'utf8');
    return cmdline.includes('kafka.Kafka') && cmdline.includes(dataDir);
  } catch {
    return false;
  }
}

export function registerBroker(dataDir: string, brokerPid: number): void {
  mkdirSync(registryDir(), { recursive: true });
  ownedHere.add(dataDir);
  const entry: Entry = { brokerPid, ownerPid: process.pid, dataDir };
  writeFileSync(entryFile(dataDir), JSON.stringify(entry));
}

export function unregisterBroker(dataDir: string): void {
  ownedHere.delete(dataDir);
  rmSync(entryFile(dataDir), { force: true });
}

export function sweepOrphanedBrokers(log: (line: string) => void = () => {}): number {
  const dir = registryDir();
  if (!existsSync(dir)) return 0;
  let killed = 0;
  for (const name of readdirSync(dir)) {
    const file = join(dir, name);
    try {
      const entry = JSON.parse(readFileSync(file, 'utf8')) as Entry;
      if (ownedHere.has(entry.dataDir)) continue;
      if (isAlive(entry.ownerPid) && entry.ownerPid !== process.pid) continue;
      if (isAlive(entry.brokerPid) && isBrokerOf(entry.brokerPid, entry.dataDir)) {
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
