/**
 * Invented scored events for the parcel-inspection classifier `parcel-damage` on sorting lines 1-3: the
 * model scores a photo of each parcel with the probability that it is damaged. Line 3 has a worn camera,
 * so the model is less sure there. A fixed seed makes the same file every time.
 *
 *     npx tsx examples/parcel-damage/make-events.ts [count] [out.csv|out.jsonl]
 */
import { writeFileSync } from 'node:fs';
import { drawParcel, seededRandom } from '../../src/demo/parcels.js';

const count = Number(process.argv[2] ?? 300);
const out = process.argv[3] ?? 'examples/parcel-damage/heldout.csv';
const random = seededRandom(2026);
const start = Date.UTC(2026, 10, 20, 6, 0, 0);

const rows: { id: string; time: string; p: number; label: number; line: string }[] = [];
for (let i = 0; i < count; i++) {
  // How sure the model is: a power of a uniform, flatter (less sure) on line 3 (src/demo/parcels.ts).
  const { line, damaged, p } = drawParcel(random);
  // Now and then the model is sure and wrong.
  const label = random() < 0.04 ? 1 - Number(damaged) : Number(damaged);
  rows.push({ id: `p-${String(i).padStart(6, '0')}`, time: new Date(start + i * 1500).toISOString(), p, label, line });
}

const text = out.endsWith('.csv')
  ? ['id,model,version,time,score_kind,p,label,segment:line', ...rows.map((r) => `${r.id},parcel-damage,2026.11.3,${r.time},probability,${r.p},${r.label},${r.line}`)].join('\n')
  : rows
      .map((r) =>
        JSON.stringify({ id: r.id, model: 'parcel-damage', version: '2026.11.3', time: r.time, score: { kind: 'probability', p: r.p }, label: r.label, segment: { line: r.line } }),
      )
      .join('\n');
writeFileSync(out, `${text}\n`);
process.stdout.write(`${out}: ${count} events\n`);
