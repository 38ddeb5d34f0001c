/**
 * Outside reference: scikit-learn's AdaBoostClassifier (discrete SAMME), on the breast-cancer (Wisconsin
 * diagnostic, UCI) and digits datasets scikit-learn ships. Fixtures made by test/reference/gen_margin.py
 * (library versions in their "generatedWith" key). Our margin code sees only what a producer would send,
 * raw weighted votes, and must land on scikit-learn's own normalised decision function.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { decodeScoredEvent } from '../../../src/events/index.js';
import type { Score } from '../../../src/events/index.js';
import { binaryMargin, measureMargins, signedMargin } from '../../../src/margin/index.js';

function fixture<T>(name: string): T {
  return JSON.parse(readFileSync(new URL(`../../reference/${name}`, import.meta.url), 'utf8')) as T;
}

interface BinaryCase {
  classes: [number, number];
  labels: number[];
  voteSum: number[];
  voteTotal: number;
  decisionFunction: number[];
  predicted: number[];
}

interface MulticlassCase {
  classes: number[];
  labels: number[];
  voteShares: number[][];
  decisionFunction: number[][];
  predicted: number[];
}

interface StagedCase {
  classes: [number, number];
  labels: number[];
  rounds: number;
  alphas: number[];
  positiveVotes: string[];
  firstZeroErrorRound: number;
  checkpoints: number[];
  stagedDecisionFunction: Record<string, number[]>;
}

const { binary, multiclass } = fixture<{ binary: BinaryCase; multiclass: MulticlassCase }>('margin_adaboost.json');
const staged = fixture<StagedCase>('margin_adaboost_staged.json');

const TOL = 1e-12;
const utf8 = new TextEncoder();

/** Through the whole decode → margin path, as a Kafka message would go. */
function viaDecoder(score: Score, label: number, i: number) {
  const message = { id: `x-${i}`, model: 'adaboost', version: 'sklearn', time: 0, score, label };
  const decoded = decodeScoredEvent(utf8.encode(JSON.stringify(message)));
  if (!decoded.ok) throw new Error(`example ${i} rejected: ${decoded.reason} at ${decoded.field}`);
  const margins = measureMargins(decoded.event.score, decoded.event.label);
  if (!margins.ok) throw new Error(`example ${i}: ${margins.detail}`);
  return margins;
}

describe('binary votes against AdaBoostClassifier on breast cancer', () => {
  // sklearn.ensemble.AdaBoostClassifier.decision_function (SAMME): for each class k it adds w_t when
  // estimator t predicts k and -w_t/(K-1) otherwise, then divides by the sum of all estimator weights.
  // For K = 2 it returns pred[:, 1] - pred[:, 0] = 2 · Σ α_t h_t(x) / Σ α_t with h_t = ±1 (+1 for
  // classes_[1]). So it spans [-2, 2], and our votes margin m = sum/total must be decision_function / 2.
  it('m = decision_function / 2, the prediction is its sign, and the signed margin is y·m', () => {
    expect(binary.labels.length).toBeGreaterThan(100);
    expect(Math.min(...binary.decisionFunction)).toBeLessThan(0);
    expect(Math.max(...binary.decisionFunction)).toBeGreaterThan(0);
    binary.labels.forEach((label, i) => {
      const df = binary.decisionFunction[i] as number;
      const m = viaDecoder({ kind: 'votes', sum: binary.voteSum[i] as number, total: binary.voteTotal }, label, i);
      const y = label === binary.classes[1] ? 1 : -1;
      expect(m.confidence).toBeCloseTo(Math.abs(df / 2), 12);
      expect(m.signed).toBeCloseTo((y * df) / 2, 12);
      // scikit-learn's predict: classes_[decision_function > 0].
      expect(m.predicted).toBe(binary.predicted[i] === binary.classes[1] ? 1 : -1);
    });
  });
});

describe('class vote shares against AdaBoostClassifier on digits', () => {
  // sklearn.ensemble.AdaBoostClassifier.decision_function (SAMME), K classes: df_k = Σ_t α_t c_tk / Σ α_t
  // with c_tk = 1 if estimator t predicts k, else -1/(K-1). With s_k the vote share Σ_t α_t [h_t = k] / Σ α_t
  // that is df_k = s_k - (1 - s_k)/(K-1) = (K·s_k - 1)/(K - 1): an affine image of the shares. So a
  // difference of shares is (K-1)/K times the same difference of decision values, and our top1 - top2 and
  // w_y - max_{k≠y} w_k must be (K-1)/K times scikit-learn's.
  const K = multiclass.classes.length;
  const scale = (K - 1) / K;

  it('the exported shares are that affine image of decision_function', () => {
    multiclass.voteShares.forEach((shares, i) => {
      shares.forEach((s, k) => expect(s).toBeCloseTo(((K - 1) * (multiclass.decisionFunction[i]?.[k] as number) + 1) / K, 12));
    });
  });

  it('confidence, signed margin and prediction match (K-1)/K times the decision function', () => {
    let ties = 0;
    multiclass.labels.forEach((label, i) => {
      const df = multiclass.decisionFunction[i] as number[];
      const values = Object.fromEntries(multiclass.classes.map((c, k) => [String(c), multiclass.voteShares[i]?.[k] as number]));
      const m = viaDecoder({ kind: 'classes', values }, label, i);
      const sorted = [...df].sort((a, b) => b - a);
      const gap = (sorted[0] as number) - (sorted[1] as number);
      const own = df[multiclass.classes.indexOf(label)] as number;
      const rival = Math.max(...df.filter((_, k) => multiclass.classes[k] !== label));
      expect(m.confidence).toBeCloseTo(scale * gap, 12);
      expect(m.signed).toBeCloseTo(scale * (own - rival), 12);
      // scikit-learn's predict is the first argmax in classes_ order; on an exact tie in the votes the two
      // may differ only through float summation order, so ties are counted, not compared.
      if (gap > 1e-9) expect(m.predicted).toBe(String(multiclass.predicted[i]));
      else ties++;
    });
    expect(ties).toBeLessThan(multiclass.labels.length / 20);
  });
});

/** Every round's vote sums, rebuilt from the exported weights and weak-learner votes. */
function* rounds(fixture: StagedCase): Generator<{ round: number; sums: Float64Array; total: number }> {
  const n = fixture.labels.length;
  const sums = new Float64Array(n);
  let total = 0;
  for (let t = 0; t < fixture.rounds; t++) {
    const alpha = fixture.alphas[t] as number;
    const bits = Uint8Array.from((fixture.positiveVotes[t] as string).match(/../g) ?? [], (h) => parseInt(h, 16));
    for (let i = 0; i < n; i++) {
      const positive = ((bits[i >> 3] as number) >> (7 - (i & 7))) & 1;
      sums[i] = (sums[i] as number) + (positive === 1 ? alpha : -alpha);
    }
    total += alpha;
    yield { round: t + 1, sums, total };
  }
}

interface RoundStats {
  errors: number;
  minSigned: number;
  lowShare: number;
}

const THETA = 0.2;

/** Per-round statistics, and the largest gap to staged_decision_function / 2 seen at the checkpoints. */
function measureRounds(): { stats: Map<number, RoundStats>; checkpointGap: number; checked: number } {
  const out = new Map<number, RoundStats>();
  let checkpointGap = 0;
  let checked = 0;
  const n = staged.labels.length;
  for (const { round, sums, total } of rounds(staged)) {
    let errors = 0;
    let minSigned = Infinity;
    let low = 0;
    for (let i = 0; i < n; i++) {
      const score: Score = { kind: 'votes', sum: sums[i] as number, total };
      const result = signedMargin(score, staged.labels[i] as number);
      if (!result.ok || result.value === undefined) throw new Error('labels are 0/1');
      const signed = result.value;
      if (signed <= 0) errors++;
      if (signed < THETA) low++;
      if (signed < minSigned) minSigned = signed;
      const checkpoint = staged.stagedDecisionFunction[String(round)];
      // sklearn.ensemble.AdaBoostClassifier.staged_decision_function: the same normalisation as
      // decision_function over the first `round` estimators, so again m = value / 2.
      if (checkpoint !== undefined) {
        checkpointGap = Math.max(checkpointGap, Math.abs(binaryMargin(score) - (checkpoint[i] as number) / 2));
        checked++;
      }
    }
    out.set(round, { errors, minSigned, lowShare: low / n });
  }
  return { stats: out, checkpointGap, checked };
}

describe('boosting behaviour through our margins (staged AdaBoost, depth-2 trees, breast cancer)', () => {
  const { stats, checkpointGap, checked } = measureRounds();
  const z = staged.firstZeroErrorRound;
  const after = staged.checkpoints.filter((t) => t >= z);
  const at = (t: number): RoundStats => stats.get(t) as RoundStats;

  it('rebuilt vote sums match staged_decision_function at every checkpoint', () => {
    expect(Object.keys(staged.stagedDecisionFunction).map(Number)).toStrictEqual(staged.checkpoints);
    expect(stats.size).toBe(staged.rounds);
    expect(checked).toBe(staged.checkpoints.length * staged.labels.length);
    expect(checkpointGap).toBeLessThan(TOL);
  });

  it('training error first reaches 0 where scikit-learn staged_predict says', () => {
    const firstZero = [...stats].find(([, s]) => s.errors === 0)?.[0];
    expect(firstZero).toBe(z);
    expect(at(z - 1).errors).toBeGreaterThan(0);
  });

  it('once training error reaches 0 it stays 0, at every one of the rounds', () => {
    for (const [round, s] of stats) if (round >= z) expect(s.errors, `round ${round}`).toBe(0);
  });

  // Observed on this data (scikit-learn 1.9.1): the minimum signed margin rises at every checkpoint up to
  // round 500, then falls slightly by round 1000. AdaBoost is not guaranteed to maximise the minimum
  // margin (Rudin, Daubechies & Schapire, "The dynamics of AdaBoost", JMLR 5, 2004); this table names the
  // one exception instead of loosening the check, and the test fails if the exception goes away.
  const KNOWN_DIPS = [[500, 1000]];

  it('the minimum signed training margin does not fall between checkpoints, but for the known dip', () => {
    expect(at(z).minSigned).toBeGreaterThan(0);
    for (let k = 1; k < after.length; k++) {
      const [a, b] = [after[k - 1] as number, after[k] as number];
      const known = KNOWN_DIPS.some(([x, y]) => x === a && y === b);
      if (known) {
        expect(at(b).minSigned, `${a} -> ${b}`).toBeLessThan(at(a).minSigned);
        expect(at(a).minSigned - at(b).minSigned).toBeLessThan(0.005);
      } else {
        expect(at(b).minSigned, `${a} -> ${b}`).toBeGreaterThanOrEqual(at(a).minSigned);
      }
    }
    expect(at(staged.rounds).minSigned).toBeGreaterThan(at(100).minSigned);
  });

  it('the share of training margins below θ = 0.2 does not grow between checkpoints', () => {
    for (let k = 1; k < after.length; k++) {
      const [a, b] = [after[k - 1] as number, after[k] as number];
      expect(at(b).lowShare, `${a} -> ${b}`).toBeLessThanOrEqual(at(a).lowShare);
    }
    expect(at(z).lowShare).toBeGreaterThan(0);
  });

  it('round by round neither quantity is monotone, which is why the checks use checkpoints', () => {
    let minFalls = 0;
    let lowRises = 0;
    for (let t = z + 1; t <= staged.rounds; t++) {
      if (at(t).minSigned < at(t - 1).minSigned) minFalls++;
      if (at(t).lowShare > at(t - 1).lowShare) lowRises++;
    }
    expect(minFalls).toBeGreaterThan(0);
    expect(lowRises).toBeGreaterThan(0);
  });
});
