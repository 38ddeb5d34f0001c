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
  stdout(): string;
  stderr(): string;
  /** stdout's complete lines that are JSON objects (the pino log), parsed. */
  logLines(): Record<string, unknown>[];
  /** Resolves with the exit code, or the signal's name when a signal ended it. */
  readonly exited: Promise<number | string>;
}

/** `env` is laid over this process's environment; a variable set to undefined is removed. */
export function spawnHeadroom(args: readonly string[], env: Readonly<Record<string, string | undefined>> = {}): RunningCli {
  const merged: NodeJS.ProcessEnv = { ...process.env, LOG_LEVEL: 'info', ...env };
  for (const [name, value] of Object.entries(env)) if (value === undefined) delete merged[name];
  const child = spawn(process.execPath, ['--import', 'tsx', MAIN, ...args], { env: merged, stdio: ['ignore', 'pipe', 'pipe'] });
  let text = '';
  let out = '';
  let err = '';
  child.stdout?.on('data', (chunk: Buffer) => {
    text += chunk.toString('utf8');
    out += chunk.toString('utf8');
  });
  child.stderr?.on('data', (chunk: Buffer) => {
    text += chunk.toString('utf8');
    err += chunk.toString('utf8');
  });
  const exited = new Promise<number | string>((resolve) => child.once('exit', (code, signal) => resolve(code ?? signal ?? 'unknown')));
  const logLines = (): Record<string, unknown>[] =>
    out
      .split('\n')
      .slice(0, -1)
      .flatMap((line) => {
        try {
          const parsed: unknown = JSON.parse(line);
          return typeof parsed === 'object' && parsed !== null ? [parsed as Record<string, unknown>] : [];
        } catch {
          return [];
        }
      });
  return { child, output: () => text, stdout: () => out, stderr: () => err, logLines, exited };
}
