#!/usr/bin/env node
/**
 * The one `headroom` binary. Each verb lives in its own module; this file only wires them to commander
 * and maps errors to exit codes (src/errors.ts), so every verb fails the same way.
 */
import { Command, CommanderError } from 'commander';
import { exitCodeOf, isHeadroomError } from '../errors.js';
import { registerReferenceCommand } from './reference-command.js';
import { registerDemoCommand } from './demo-command.js';
import { registerReplayCommand } from './replay-command.js';
import { registerWatchCommand } from './watch-command.js';

export function buildProgram(): Command {
  const program = new Command('headroom')
    .description('Watches deployed classifiers through their margins: live margin distributions against reference data.')
    .version('0.1.0')
    // Program options only before the verb: otherwise `reference --version 2026.11.3` prints headroom's version.
    .enablePositionalOptions()
    .showHelpAfterError()
    .exitOverride();
  registerWatchCommand(program);
  registerReferenceCommand(program);
  registerReplayCommand(program);
  registerDemoCommand(program);
  return program;
}

async function main(argv: string[]): Promise<number> {
  try {
    await buildProgram().parseAsync(argv);
    return 0;
  } catch (error) {
    if (error instanceof CommanderError) return error.exitCode === 0 ? 0 : 64;
    if (isHeadroomError(error)) {
      process.stderr.write(`headroom: ${error.message} [${error.code}]\n`);
    } else {
      process.stderr.write(`headroom: unexpected error: ${error instanceof Error ? (error.stack ?? error.message) : String(error)}\n`);
    }
    return exitCodeOf(error);
  }
}

process.exitCode = await main(process.argv);
