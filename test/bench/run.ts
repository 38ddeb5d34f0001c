/**
 * `npm run bench`: every benchmark in turn, each in its own Node process (so one's heap and JIT state
 * never colour another's figures). Benchmarks print figures and ratios; none of them passes or fails.
 * `npm run bench -- NAME...` runs only the benchmarks whose file name contains a NAME (e.g. `watch-e2e`).
 */
import { spawnSync } from 'node:child_process';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

const here = dirname(fileURLToPath(import.meta.url));
const BENCHES: ReadonlyArray<{ file: string; title: string; args?: string[] }> = [
  { file: 'throughput.ts', title: 'hot path (decode + margin + sketch) vs JSON.parse of the same bytes' },
  { file: 'sketch-accuracy.ts', title: 'sketch accuracy: quantile rank error and KS from sketches vs exact, beside the npm tdigest package' },
  { file: 'sketch-memory.ts', title: 'bytes held per series for 24 h at 1,000 events/s' },
  { file: 'checkpoint-records.ts', title: 'a partition checkpoint as Kafka records: JSON vs gzip, chunks per save' },
  { file: 'label-memory.ts', title: 'delayed labels: heap bytes per waiting prediction, and checkpoint bytes' },
  { file: 'alert-simulation.ts', title: 'alerts: CUSUM (event by event and bucket feed) vs fixed-window threshold, false alarms and delay' },
  { file: 'watch-e2e.ts', title: 'headroom watch end to end on a real broker vs a bare kafkajs eachBatch + JSON.parse consumer' },
  { file: 'scale.ts', title: 'events/s through 1, 2 and 3 headroom watch processes on one group, checkpoints on a Kafka topic' },
  { file: 'replay.ts', title: 'headroom replay of a 1e6-event .gz JSONL file vs a raw gunzip + line split of the same file' },
];

const only = process.argv.slice(2).filter((a) => !a.startsWith('-'));
let failed = 0;
for (const bench of BENCHES) {
  if (only.length > 0 && !only.some((name) => bench.file.includes(name))) continue;
  console.log(`\n=== ${bench.title} (${bench.file})`);
  const result = spawnSync(process.execPath, ['--expose-gc', '--import', 'tsx', join(here, bench.file), ...(bench.args ?? [])], { stdio: 'inherit' });
  if (result.status !== 0) {
    failed += 1;
    console.log(`(${bench.file} exited with ${result.status ?? result.signal})`);
  }
}
process.exitCode = failed === 0 ? 0 : 1;
