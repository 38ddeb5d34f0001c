/**
 * What a partition's checkpoint costs as Kafka records (src/state/kafka-records.ts): its JSON, gzipped
 * at level 1 (the store's default) and 6, the time each takes here, and how many chunk records of the
 * default 512 KiB a save then writes besides its head. States from test/unit/state/big-state.ts: 130
 * minutes of event time (the default 2 h fine tier, full), one model with a `line` segment key.
 *
 *     npx tsx test/bench/checkpoint-records.ts
 */
import { gzipSync } from 'node:zlib';
import { DEFAULT_CHUNK_BYTES, planSave, stateKey } from '../../src/state/kafka-records.js';
import { bigState } from '../unit/state/big-state.js';

const kib = (b: number): string => `${(b / 1024).toFixed(0)} KiB`;

function timed<T>(f: () => T): [T, number] {
  const start = performance.now();
  const out = f();
  return [out, performance.now() - start];
}

for (const [lines, perMinute] of [[1, 2000], [4, 3000], [8, 6000]] as const) {
  const state = bigState('scores', 0, { minutes: 130, perMinute, lines });
  const [text, stringifyMs] = timed(() => JSON.stringify(state));
  const raw = Buffer.from(text);
  const [fast, fastMs] = timed(() => gzipSync(raw, { level: 1 }));
  const [dense, denseMs] = timed(() => gzipSync(raw, { level: 6 }));
  const plan = planSave(stateKey('g', 'scores', 0), fast, 'bench', DEFAULT_CHUNK_BYTES);
  console.log(
    `${state.series.length} series, ${perMinute} events/min: JSON ${raw.length.toLocaleString('en')} B (${kib(raw.length)}, stringify ${stringifyMs.toFixed(0)} ms); ` +
      `gzip -1 ${fast.length.toLocaleString('en')} B (${(raw.length / fast.length).toFixed(2)}x, ${fastMs.toFixed(0)} ms); ` +
      `gzip -6 ${dense.length.toLocaleString('en')} B (${(raw.length / dense.length).toFixed(2)}x, ${denseMs.toFixed(0)} ms); ` +
      `records per save: ${plan.chunks.length === 0 ? '1 inline' : `${plan.chunks.length} chunks + manifest`}`,
  );
}
