import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { LabelSummary, MARGIN_LOSS_GRID, expectedCalibrationError, labelFigures } from '../../../src/labels/index.js';
import { MarginSummary } from '../../../src/sketch/index.js';

describe('expected calibration error', () => {
  it('is the count-weighted mean gap between predicted and observed, worked by hand', () => {
    // Four predictions: p = 0.15, 0.15 (labels 0, 1) in bin (0.1, 0.2]; p = 0.9, 0.95 (labels 1, 1) in bin (0.8, 0.9] and (0.9, 1].
    // Bin (0.1, 0.2]: mean p 0.15, observed 0.5, gap 0.35, weight 2/4.
    // Bin (0.8, 0.9]: mean p 0.9, observed 1, gap 0.1, weight 1/4.
    // Bin (0.9, 1]:   mean p 0.95, observed 1, gap 0.05, weight 1/4.
    // ECE = 0.5·0.35 + 0.25·0.1 + 0.25·0.05 = 0.2125.
    const s = new LabelSummary(100);
    s.add(2 * 0.15 - 1, 0.15, false);
    s.add(-(2 * 0.15 - 1), 0.15, true);
    s.add(2 * 0.9 - 1, 0.9, true);
    s.add(2 * 0.95 - 1, 0.95, true);
    const bins = s.calibration?.bins() ?? [];
    expect(expectedCalibrationError(bins)).toBeCloseTo(0.2125, 12);
  });

  it('is null with no predictions in any bin', () => {
    expect(expectedCalibrationError([])).toBeNull();
  });
});

describe('labelFigures', () => {
  it('counts a signed margin of exactly 0 as a mistake and gives a Wilson interval', () => {
    const s = new LabelSummary(100);
    for (const x of [0, 0.5, 0.5, -0.2]) s.add(x, undefined, true);
    const f = labelFigures({ labels: s, confidence: new MarginSummary(), probabilistic: false, reference: null });
    expect(f.n).toBe(4);
    expect(f.errorRate.successes).toBe(2);
    expect(f.errorRate.share).toBe(0.5);
    expect(f.errorRate.lower).toBeGreaterThan(0);
    expect(f.marginLoss.find((m) => m.theta === -0.25)?.live).toBe(0);
    expect(f.marginLoss.find((m) => m.theta === 0.5)?.live).toBe(1);
    expect(f.calibration).toBeNull();
    expect(f.labelFree).toBeNull();
  });

  it('estimates the error of a calibrated model as E[min(p, 1 - p)] from the confidence margins', () => {
    const confidence = new MarginSummary();
    const ps = [0.9, 0.2, 0.6, 0.5];
    for (const p of ps) confidence.add(Math.abs(2 * p - 1));
    const f = labelFigures({ labels: new LabelSummary(100), confidence, probabilistic: true, reference: null });
    const expected = ps.reduce((a, p) => a + Math.min(p, 1 - p), 0) / ps.length;
    expect(f.labelFree?.estimate).toBeCloseTo(expected, 12);
    expect(f.labelFree?.observed).toBeNull();
    expect(f.labelFree?.note).toMatch(/calibrated/);
  });
});

interface Fixture {
  calibration: { p: number[]; labels: number[]; probTrue: number[]; probPred: number[]; binCounts: number[] };
  adaboost: { labels: number[]; classes: number[]; grid: number[]; rounds: Record<string, { decisionFunction: number[]; sklearnErrorRate: number; signedAtMostZero: number; ties: number; marginLoss: number[] }> };
}

const FIXTURE = new URL('../../reference/labels_reference.json', import.meta.url);

describe('against scikit-learn (test/reference/labels_reference.json)', () => {
  const fixture = JSON.parse(readFileSync(FIXTURE, 'utf8')) as Fixture;

  it('reliability bins agree with scikit-learn calibration_curve(n_bins=10, strategy="uniform")', () => {
    const { p, labels, probTrue, probPred, binCounts } = fixture.calibration;
    const s = new LabelSummary(100);
    p.forEach((pi, i) => s.add((labels[i] === 1 ? 1 : -1) * (2 * pi - 1), pi, labels[i] === 1));
    const bins = s.calibration?.bins() ?? [];
    expect(bins.map((b) => b.count)).toEqual(binCounts);
    const nonEmpty = bins.filter((b) => b.count > 0);
    // scikit-learn calibration_curve returns prob_true and prob_pred of the non-empty bins only.
    expect(nonEmpty.map((b) => b.observedRate)).toEqual(probTrue.map((x) => expect.closeTo(x, 12)));
    expect(nonEmpty.map((b) => b.meanPredicted)).toEqual(probPred.map((x) => expect.closeTo(x, 12)));
    // ECE from those same scikit-learn figures, weighted by numpy's bin counts.
    const counts = binCounts.filter((c) => c > 0);
    const total = counts.reduce((a, b) => a + b, 0);
    const ece = counts.reduce((a, c, i) => a + (c / total) * Math.abs((probPred[i] as number) - (probTrue[i] as number)), 0);
    expect(expectedCalibrationError(bins)).toBeCloseTo(ece, 12);
  });

  it('error rates and margin-loss curves agree with scikit-learn AdaBoost staged_decision_function', () => {
    const { labels, classes, grid, rounds } = fixture.adaboost;
    expect(grid).toEqual([...MARGIN_LOSS_GRID]);
    expect(Object.keys(rounds).length).toBeGreaterThan(1);
    for (const [round, r] of Object.entries(rounds)) {
      const s = new LabelSummary(100);
      // What a producer sends as a votes score (sum = f, total = 1) with its label, through our own signed margin.
      r.decisionFunction.forEach((f, i) => s.add((labels[i] === classes[1] ? 1 : -1) * f, undefined, labels[i] === classes[1]));
      const figures = labelFigures({ labels: s, confidence: new MarginSummary(), probabilistic: false, reference: null });
      expect(figures.errorRate.share, `round ${round}`).toBeCloseTo(r.signedAtMostZero, 12);
      // Without ties (f = 0) scikit-learn's staged_predict error is the same figure.
      if (r.ties === 0) expect(figures.errorRate.share, `round ${round}`).toBeCloseTo(r.sklearnErrorRate, 12);
      expect(figures.marginLoss.map((m) => m.live), `round ${round}`).toEqual(r.marginLoss.map((x) => expect.closeTo(x, 12)));
    }
  });
});
