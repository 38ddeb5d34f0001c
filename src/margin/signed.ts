/**
 * Margins with a known label. The signed margin is y·m for binary scores and w_y − max_{k≠y} w_k for
 * classes scores, in [-1, 1]; ≤ 0 means the model was wrong. A label that does not fit its score is
 * rejected as `bad_label` (field `label`), never guessed at: a wrong guess would move the figures.
 */
import { rejection } from '../events/reasons.js';
import type { Rejection } from '../events/reasons.js';
import type { Label, Score } from '../events/schema.js';
import { binaryMargin, clampUnit, confidenceMargin, predictedLabel } from './margin.js';
import type { PredictedLabel } from './margin.js';

/** `value` is undefined for `margin` scores: the producer sent |m| only, so the sign (right or wrong) is lost. */
export type SignedMarginResult = { readonly ok: true; readonly value: number | undefined } | Rejection;

export interface Margins {
  readonly ok: true;
  /** In [0, 1]; what the low-margin share and the reference comparison are about. */
  readonly confidence: number;
  /** In [-1, 1] when the event has a label and the score has a sign, else undefined. */
  readonly signed: number | undefined;
  readonly predicted: PredictedLabel | undefined;
}

export type MarginsResult = Margins | Rejection;

/**
 * The label conventions producers use for binary targets: 1/0, 1/−1 and true/false, and the same
 * written as strings ("1", "0", "-1", "true", "false") because CSV-born pipelines stringify everything.
 * A binary score has no class names, so a string cannot be meant as one. Nothing else is accepted:
 * not 2, not "yes", not "True" (Python's str(True)); guessing there would silently flip margins.
 */
export function binaryLabelSign(label: Label): 1 | -1 | undefined {
  switch (label) {
    case 1:
    case true:
    case '1':
    case 'true':
      return 1;
    case 0:
    case -1:
    case false:
    case '0':
    case '-1':
    case 'false':
      return -1;
    default:
      return undefined;
  }
}

/**
 * The class a label names: a string names itself; a number names the class keyed by its JavaScript
 * string form (3 → "3"), since JSON keys are strings while producers often send integer targets.
 * A boolean never names a class.
 */
export function className(label: Label): string | undefined {
  if (typeof label === 'string') return label;
  if (typeof label === 'number') return String(label);
  return undefined;
}

function badLabel(detail: string): Rejection {
  return rejection('bad_label', 'label', detail);
}

function describe(label: Label): string {
  return typeof label === 'string' ? JSON.stringify(label.length > 40 ? `${label.slice(0, 40)}...` : label) : String(label);
}

export function signedMargin(score: Score, label: Label): SignedMarginResult {
  switch (score.kind) {
    case 'probability':
    case 'logit':
    case 'votes': {
      const y = binaryLabelSign(label);
      if (y === undefined) return badLabel(`a ${score.kind} score needs a binary label (1/0, 1/-1, true/false), got ${describe(label)}`);
      // `+ 0` turns the -0 of a negative label on the boundary into 0.
      return { ok: true, value: y * binaryMargin(score) + 0 };
    }
    case 'classes': {
      const name = className(label);
      const values = score.values;
      if (name === undefined || !Object.hasOwn(values, name)) {
        return badLabel(`label ${describe(label)} is not one of the ${Object.keys(values).length} classes in score.values`);
      }
      const own = values[name] as number;
      let rival = -Infinity;
      for (const other in values) {
        if (other !== name && (values[other] as number) > rival) rival = values[other] as number;
      }
      return { ok: true, value: clampUnit(own - rival) };
    }
    case 'margin':
      return { ok: true, value: undefined };
  }
}

/** Everything the series need from one event's score and (optional) label. */
export function measureMargins(score: Score, label?: Label): MarginsResult {
  const confidence = confidenceMargin(score);
  const predicted = predictedLabel(score);
  if (label === undefined) return { ok: true, confidence, signed: undefined, predicted };
  const signed = signedMargin(score, label);
  if (!signed.ok) return signed;
  return { ok: true, confidence, signed: signed.value, predicted };
}
