/**
 * Memory of the delayed-label join: heap bytes per waiting prediction in PendingLabels, measured with
 * decoded events as the watcher holds them (ids "p-000123", probability scores, a two-key segment). Run
 * with --expose-gc (npm run bench does), else the figure is rough. Never pass/fail.
 */
import { decodeScoredEvent } from '../../src/events/index.js';
import { PendingLabels } from '../../src/labels/index.js';

const N = Number(process.env.HEADROOM_BENCH_PENDING ?? 200_000);

function heap(): number {
  const gc = (globalThis as { gc?: () => void }).gc;
  gc?.();
  gc?.();
  return process.memoryUsage().heapUsed;
}

function run(): void {
  const encoder = new TextEncoder();
  const store = new PendingLabels({ ttlMs: 86_400_000, maxEntries: N });
  const model = 'parcel-damage';
  const version = '2026.11.3';
  const before = heap();
  for (let i = 0; i < N; i += 1) {
    const bytes = encoder.encode(
      JSON.stringify({ id: `p-${String(i).padStart(6, '0')}`, model, version, time: 1_780_000_000_000 + i, score: { kind: 'probability', p: (i % 997) / 997 }, segment: { line: String(i % 7), site: 'north' } }),
    );
    const decoded = decodeScoredEvent(bytes);
    if (!decoded.ok) throw new Error(decoded.reason);
    const e = decoded.event;
    // Model and version are shared strings (the watcher passes its series' own), as in PartitionState.
    store.addPrediction(e.id, { timeMs: e.timeMs, model, version, segment: e.segment, score: e.score });
  }
  const after = heap();
  const gcNote = (globalThis as { gc?: unknown }).gc === undefined ? ' (no --expose-gc: rough)' : '';
  console.log(`label-memory: ${N} waiting predictions, ${((after - before) / N).toFixed(1)} heap bytes each${gcNote}; waiting=${store.waiting().predictions}`);
  const json = JSON.stringify(store.toState()).length;
  console.log(`label-memory: checkpoint JSON ${(json / N).toFixed(1)} bytes per waiting prediction`);
}

run();
