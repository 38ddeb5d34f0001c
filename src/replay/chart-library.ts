/**
 * The charting library report.html inlines: uPlot, already a dependency, read from its installed package
 * (found through Node's package resolution, so it works from src/ under tsx, from dist/, and when headroom
 * is installed as a package). The I/O edge of the HTML writer; src/replay/html.ts stays pure.
 *
 * Licence: uPlot is MIT (node_modules/uplot/LICENSE), which allows copying it into another file provided
 * its copyright and permission notice go with it: the page carries that text in a comment above the code.
 */
import { readFile } from 'node:fs/promises';
import { createRequire } from 'node:module';
import { dirname, join } from 'node:path';
import { HeadroomError } from '../errors.js';

export interface ChartLibrary {
  readonly name: string;
  readonly version: string;
  /** The minified browser build, which defines the global `uPlot`. */
  readonly script: string;
  readonly css: string;
  /** The licence text, to be kept beside the copied code. */
  readonly licence: string;
}

export async function loadChartLibrary(): Promise<ChartLibrary> {
  let root: string;
  try {
    root = dirname(createRequire(import.meta.url).resolve('uplot/package.json'));
  } catch (error) {
    throw new HeadroomError('HR_ERR_REPLAY_CHART_LIBRARY', `uplot is not installed where headroom can find it (${error instanceof Error ? error.message : String(error)}); reinstall headroom's dependencies`, { cause: error });
  }
  const read = async (file: string): Promise<string> => {
    try {
      return await readFile(join(root, file), 'utf8');
    } catch (error) {
      throw new HeadroomError('HR_ERR_REPLAY_CHART_LIBRARY', `${join(root, file)}: ${error instanceof Error ? error.message : String(error)}; reinstall headroom's dependencies`, { cause: error });
    }
  };
  const pkg = JSON.parse(await read('package.json')) as { version?: unknown };
  return {
    name: 'uPlot',
    version: typeof pkg.version === 'string' ? pkg.version : 'unknown',
    script: await read('dist/uPlot.iife.min.js'),
    css: await read('dist/uPlot.min.css'),
    licence: await read('LICENSE'),
  };
}
