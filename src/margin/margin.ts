/**
 * Score → margin (DESIGN.md, "Margins"). Every score kind is brought to the normalised margin of the
 * boosting literature: for binary scores a signed m in [-1, 1] whose sign is the prediction, for
 * multiclass scores the gap between the two largest class weights. Pure arithmetic on decoded scores;
 * the decoder has already guaranteed the ranges each formula relies on.
 */
import type { Score } from '../events/schema.js';

export type BinaryScore = Extract<Score, { kind: 'probability' | 'logit' | 'votes' }>;
export type ClassesScore = Extract<Score, { kind: 'classes' }>;

/** +1 / -1 for a binary score, the class name for a classes score. */
export type PredictedLabel = 1 | -1 | string;

export function isBinaryScore(score: Score): score is BinaryScore {
  return score.kind === 'probability' || score.kind === 'logit' || score.kind === 'votes';
}

/**
 * Overshoot beyond [-1, 1] comes only from tolerances the decoder grants (|sum| may exceed total by a
 * relative 1e-12; class values may sum to 1 + 1e-6), never from a real excess, so clamping is exact.
 */
export function clampUnit(x: number): number {
  return x > 1 ? 1 : x < -1 ? -1 : x;
}

/**
 * The binary margin m in [-1, 1]; m > 0 predicts the positive class. The three forms agree where they
 * overlap: a probability p = sigmoid(z) gives 2p - 1 = tanh(z/2), and Σαₜhₜ / Σαₜ is the weighted vote
 * share of the positive class minus that of the negative one.
 */
export function binaryMargin(score: BinaryScore): number {
  switch (score.kind) {
    case 'probability':
      return 2 * score.p - 1;
    case 'logit':
      return Math.tanh(score.z / 2);
    case 'votes':
      return clampUnit(score.sum / score.total);
  }
}

/** Largest minus second largest class weight, in [0, 1]. Needs at least two classes (decoded scores have). */
export function topTwoGap(values: Readonly<Record<string, number>>): number {
  let first = -Infinity;
  let second = -Infinity;
  for (const name in values) {
    const v = values[name] as number;
    if (v > first) {
      second = first;
      first = v;
    } else if (v > second) {
      second = v;
    }
  }
  return Math.min(1, first - second);
}

/** How sure the model is, whatever it was sure of: in [0, 1], 0 on the decision boundary. */
export function confidenceMargin(score: Score): number {
  switch (score.kind) {
    case 'probability':
    case 'logit':
    case 'votes':
      return Math.abs(binaryMargin(score));
    case 'classes':
      return topTwoGap(score.values);
    case 'margin':
      return score.value;
  }
}

/**
 * Binary: +1 when m > 0, otherwise -1. A score exactly on the boundary (p = 0.5, z = 0, sum = 0) counts
 * as negative, as scikit-learn's `predict` does (`decision_function(X) > 0`); its signed margin is 0 for
 * either label, so it counts as a mistake whichever way the truth falls.
 * Classes: the class with the largest value; among equal largest values the name that sorts first
 * (by UTF-16 code units), so the answer does not depend on the key order a producer happened to write.
 * Margin scores carry no prediction: undefined.
 */
export function predictedLabel(score: Score): PredictedLabel | undefined {
  switch (score.kind) {
    case 'probability':
    case 'logit':
    case 'votes':
      return binaryMargin(score) > 0 ? 1 : -1;
    case 'classes': {
      let best: string | undefined;
      let bestValue = -Infinity;
      for (const name in score.values) {
        const v = score.values[name] as number;
        if (v > bestValue || (v === bestValue && best !== undefined && name < best)) {
          best = name;
          bestValue = v;
        }
      }
      return best;
    }
    case 'margin':
      return undefined;
  }
}
