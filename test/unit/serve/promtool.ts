/** The real `promtool check metrics`, when it is on PATH; under CI=true its absence fails instead of skipping. */
import { spawnSync } from 'node:child_process';

export const promtool = spawnSync('promtool', ['--version'], { encoding: 'utf8' });
export const havePromtool = promtool.error === undefined && promtool.status === 0;
export const mustRunPromtool = process.env.CI === 'true';

export function checkMetrics(text: string) {
  return spawnSync('promtool', ['check', 'metrics'], { input: text, encoding: 'utf8' });
}
