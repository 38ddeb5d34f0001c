/**
 * Verbs whose issues are still open. They are listed in --help so the interface is visible, and each says
 * plainly that it is not built yet instead of pretending to run.
 */
import type { Command } from 'commander';
import { HeadroomError } from '../errors.js';

const PLANNED: ReadonlyArray<{ name: string; summary: string }> = [
  { name: 'demo', summary: 'the embedded parcel-inspection scenario with the live page; no broker needed' },
];

export function registerPlannedCommands(program: Command): void {
  for (const verb of PLANNED) {
    program
      .command(verb.name)
      .description(`${verb.summary} (not built yet)`)
      .allowUnknownOption()
      .allowExcessArguments()
      .action(() => {
        throw new HeadroomError('HR_ERR_CLI_NOT_BUILT', `\`headroom ${verb.name}\` is not built yet in this version; see the README's status section`);
      });
  }
}
