import { describe, expect, it } from 'vitest';
import type { Label, Score } from '../../../src/events/index.js';
import {
  binaryLabelSign,
  binaryMargin,
  confidenceMargin,
  measureMargins,
  predictedLabel,
  signedMargin,
} from '../../../src/margin/index.js';
import { rng } from '../events/prng.js';
import type { Rng } from '../events/prng.js';

const sigmoid = (z: number): number => 1 / (1 + Math.exp(-z));

function value(result: ReturnType<typeof signedMargin>): number | undefined {
  if (!result.ok) throw new Error(`unexpected rejection: ${result.detail}`);
  return result.value;
}

describe('binary margins', () => {
  it('follows m = 2p - 1, tanh(z/2) and sum/total', () => {
    expect(binaryMargin({ kind: 'probability', p: 0.91 })).toBeCloseTo(0.82, 15);
    expect(binaryMargin({ kind: 'probability', p: 0 })).toBe(-1);
    expect(binaryMargin({ kind: 'probability', p: 1 })).toBe(1);
    expect(binaryMargin({ kind: 'logit', z: 0 })).toBe(0);
    expect(binaryMargin({ kind: 'logit', z: 2.3 })).toBeCloseTo(Math.tanh(1.15), 15);
    expect(binaryMargin({ kind: 'votes', sum: 1.7, total: 3.2 })).toBeCloseTo(1.7 / 3.2, 15);
  });

  it('gives the same margin for a logit and its probability sigmoid(z)', () => {
    for (let z = -30; z <= 30; z += 0.37) {
      expect(binaryMargin({ kind: 'logit', z })).toBeCloseTo(binaryMargin({ kind: 'probability', p: sigmoid(z) }), 12);
    }
  });

  it('saturates at ±1 for huge logits and clamps the float slack of votes', () => {
    expect(binaryMargin({ kind: 'logit', z: 1e6 })).toBe(1);
    expect(binaryMargin({ kind: 'logit', z: -1e6 })).toBe(-1);
    expect(binaryMargin({ kind: 'votes', sum: 3.2 * (1 + 5e-13), total: 3.2 })).toBe(1);
    expect(binaryMargin({ kind: 'votes', sum: -3.2 * (1 + 5e-13), total: 3.2 })).toBe(-1);
  });

  it('confidence is |m|, prediction its sign, and the boundary predicts -1', () => {
    expect(confidenceMargin({ kind: 'probability', p: 0.2 })).toBeCloseTo(0.6, 15);
    expect(predictedLabel({ kind: 'probability', p: 0.2 })).toBe(-1);
    expect(predictedLabel({ kind: 'logit', z: 1e-300 })).toBe(1);
    for (const tie of [{ kind: 'probability', p: 0.5 }, { kind: 'logit', z: 0 }, { kind: 'votes', sum: 0, total: 1 }] as const) {
      expect(predictedLabel(tie)).toBe(-1);
      expect(confidenceMargin(tie)).toBe(0);
      expect(value(signedMargin(tie, 1))).toBe(0);
      expect(value(signedMargin(tie, 0))).toBe(0);
    }
  });
});

describe('binary labels', () => {
  it.each<[Label, 1 | -1]>([
    [1, 1], [true, 1], ['1', 1], ['true', 1],
    [0, -1], [-1, -1], [false, -1], ['0', -1], ['-1', -1], ['false', -1],
  ])('%j means %d', (label, sign) => {
    expect(binaryLabelSign(label)).toBe(sign);
    expect(value(signedMargin({ kind: 'probability', p: 0.8 }, label))).toBeCloseTo(sign * 0.6, 15);
  });

  it.each<Label>([2, 0.5, -0.5, 'yes', 'True', 'FALSE', '1.0', '+1', '', 'benign'])('%j is refused as bad_label', (label) => {
    expect(binaryLabelSign(label)).toBeUndefined();
    const result = signedMargin({ kind: 'votes', sum: 1, total: 2 }, label);
    expect(result.ok ? null : [result.reason, result.field]).toStrictEqual(['bad_label', 'label']);
  });

  it('signed margin <= 0 exactly when the prediction is wrong (m != 0)', () => {
    const r = rng(11);
    for (let i = 0; i < 2000; i++) {
      const score: Score = { kind: 'probability', p: r.next() };
      const label = r.pick<Label>([1, 0, true, false, -1]);
      const wrong = predictedLabel(score) !== binaryLabelSign(label);
      const signed = value(signedMargin(score, label)) as number;
      if (signed !== 0) expect(signed < 0).toBe(wrong);
      expect(Math.abs(signed)).toBe(confidenceMargin(score));
    }
  });
});

function randomClasses(r: Rng, n: number): Record<string, number> {
  const raw = Array.from({ length: n }, () => r.next() ** 3);
  const sum = raw.reduce((a, b) => a + b, 0);
  return Object.fromEntries(raw.map((v, i) => [`c${i}`, v / sum]));
}

describe('classes margins', () => {
  it('confidence is top1 - top2', () => {
    expect(confidenceMargin({ kind: 'classes', values: { a: 0.7, b: 0.2, c: 0.1 } })).toBeCloseTo(0.5, 15);
    expect(confidenceMargin({ kind: 'classes', values: { a: 0.1, b: 0.2, c: 0.7 } })).toBeCloseTo(0.5, 15);
    expect(confidenceMargin({ kind: 'classes', values: { a: 0.45, b: 0.45, c: 0.1 } })).toBe(0);
    expect(confidenceMargin({ kind: 'classes', values: { a: 1, b: 0 } })).toBe(1);
  });

  it('agrees with sorting over random class maps', () => {
    const r = rng(5);
    for (let i = 0; i < 1000; i++) {
      const values = randomClasses(r, 2 + r.int(9));
      const sorted = Object.values(values).sort((a, b) => b - a);
      expect(confidenceMargin({ kind: 'classes', values })).toBe((sorted[0] as number) - (sorted[1] as number));
      const argmax = Object.entries(values).reduce((best, e) => (e[1] > best[1] ? e : best))[0];
      expect(predictedLabel({ kind: 'classes', values })).toBe(argmax);
    }
  });

  it('breaks ties by name, whatever order the keys came in', () => {
    expect(predictedLabel({ kind: 'classes', values: { b: 0.4, a: 0.4, c: 0.2 } })).toBe('a');
    expect(predictedLabel({ kind: 'classes', values: { a: 0.4, b: 0.4, c: 0.2 } })).toBe('a');
    // Integer-like keys iterate first in JavaScript; the rule still picks by name.
    expect(predictedLabel({ kind: 'classes', values: { z: 0.5, '9': 0.5 } })).toBe('9');
    expect(predictedLabel({ kind: 'classes', values: { '10': 0.5, '9': 0.5 } })).toBe('10');
  });

  it('signed margin is w_y - max other, for string and integer labels', () => {
    const values = { a: 0.7, b: 0.2, c: 0.1 };
    expect(value(signedMargin({ kind: 'classes', values }, 'a'))).toBeCloseTo(0.5, 15);
    expect(value(signedMargin({ kind: 'classes', values }, 'c'))).toBeCloseTo(-0.6, 15);
    expect(value(signedMargin({ kind: 'classes', values: { '3': 0.6, '5': 0.4 } }, 3))).toBeCloseTo(0.2, 15);
  });

  it('signed margin equals the confidence for the predicted class and is <= 0 for every other', () => {
    const r = rng(8);
    for (let i = 0; i < 500; i++) {
      const values = randomClasses(r, 2 + r.int(6));
      const score: Score = { kind: 'classes', values };
      const predicted = predictedLabel(score) as string;
      for (const name of Object.keys(values)) {
        const signed = value(signedMargin(score, name)) as number;
        if (name === predicted) expect(signed).toBe(confidenceMargin(score));
        else expect(signed).toBeLessThanOrEqual(0);
        expect(Math.abs(signed)).toBeLessThanOrEqual(1);
      }
    }
  });

  it('clamps the normalisation slack into [-1, 1]', () => {
    const values = { a: 1 + 5e-7, b: 0 };
    expect(value(signedMargin({ kind: 'classes', values }, 'a'))).toBe(1);
    expect(value(signedMargin({ kind: 'classes', values }, 'b'))).toBe(-1);
    expect(confidenceMargin({ kind: 'classes', values })).toBe(1);
  });

  it.each<Label>(['d', 3, true, false, '__proto__', 'A'])('refuses label %j on classes a, b, c', (label) => {
    const result = signedMargin({ kind: 'classes', values: { a: 0.7, b: 0.2, c: 0.1 } }, label);
    expect(result.ok ? null : [result.reason, result.field]).toStrictEqual(['bad_label', 'label']);
  });
});

describe('margin scores', () => {
  it('pass the value through, with no prediction and no signed margin', () => {
    const score: Score = { kind: 'margin', value: 0.42 };
    expect(confidenceMargin(score)).toBe(0.42);
    expect(predictedLabel(score)).toBeUndefined();
    expect(signedMargin(score, 1)).toStrictEqual({ ok: true, value: undefined });
  });
});

describe('measureMargins', () => {
  it('bundles confidence, signed margin and prediction', () => {
    expect(measureMargins({ kind: 'probability', p: 0.25 }, 1)).toStrictEqual({ ok: true, confidence: 0.5, signed: -0.5, predicted: -1 });
    expect(measureMargins({ kind: 'probability', p: 0.25 })).toStrictEqual({ ok: true, confidence: 0.5, signed: undefined, predicted: -1 });
  });

  it('passes a label rejection on', () => {
    const result = measureMargins({ kind: 'classes', values: { a: 0.5, b: 0.5 } }, true);
    expect(result.ok ? null : result.reason).toBe('bad_label');
  });

  it('keeps every margin in range over random scores', () => {
    const r = rng(13);
    for (let i = 0; i < 3000; i++) {
      const total = r.next() * 5 + 1e-9;
      const score: Score = r.pick<Score>([
        { kind: 'probability', p: r.next() },
        { kind: 'logit', z: (r.next() - 0.5) * 100 },
        { kind: 'votes', sum: (2 * r.next() - 1) * total, total },
        { kind: 'classes', values: randomClasses(r, 2 + r.int(5)) },
        { kind: 'margin', value: r.next() },
      ]);
      const label: Label = score.kind === 'classes' ? 'c0' : r.pick<Label>([1, 0]);
      const m = measureMargins(score, label);
      if (!m.ok) throw new Error(m.detail);
      expect(m.confidence).toBeGreaterThanOrEqual(0);
      expect(m.confidence).toBeLessThanOrEqual(1);
      if (m.signed !== undefined) {
        expect(Math.abs(m.signed)).toBeLessThanOrEqual(1);
        expect(m.signed).toBeLessThanOrEqual(m.confidence);
      }
    }
  });
});
