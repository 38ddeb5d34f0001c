/**
 * The `headroom` CLI as a child process, run from the TypeScript sources through tsx (so a test never
 * runs a stale dist/), with its output kept for assertions and for the failure message.
 */
import { spawn } from 'node:child_process';
import type { ChildProcess } from 'node:child_process';
import { fileURLToPath } from 'node:url';

const MAIN = fileURLToPath(new URL('../../src/cli/main.ts', import.meta.url));

export interface RunningCli {
  readonly child: ChildProcess;
  /** stdout and stderr so far, interleaved as they came. */
  output(): string;
  /** Resolves with the exit code, or the signal's name when a signal ended it. */
  readonly exited: Promise<number | string>;
}

export function spawnHeadroom(args: readonly string[], env: Readonly<Record<string, string>> = {}): RunningCli {
  const child = spawn(process.execPath, ['--import', 'tsx', MAIN, ...args], {
    env: { ...process.env, LOG_LEVEL: 'info', ...env },
    stdio: ['ignore', 'pipe', 'pipe'],
  });
  let text = '';
  child.stdout?.on('data', (chunk: Buffer) => (text += chunk.toString('utf8')));
  child.stderr?.on('data', (chunk: Buffer) => (text += chunk.toString('utf8')));
  const exited = new Promise<number | string>((resolve) => child.once('exit', (code, signal) => resolve(code ?? signal ?? 'unknown')));
  return { child, output: () => text, exited };
}
