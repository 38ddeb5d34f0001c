/** Checks of the options serve is built with, made once at start-up so a bad one fails before the first scrape. */
import { HeadroomError } from '../errors.js';
import type { ViewSpec } from './model.js';

/** Quantile levels exported as gauges by default: few, because each is a series per window per segment. */
export const METRIC_QUANTILE_LEVELS: readonly number[] = Object.freeze([0.1, 0.5, 0.9]);

function bad(option: string, detail: string, value: unknown): HeadroomError {
  return new HeadroomError('HR_ERR_SERVE_ARGUMENT', `${option} ${detail}`, { context: { option, value } });
}

// A window name becomes a label value and a query parameter: keep it to what reads well in both.
const VIEW_NAME = /^[0-9A-Za-z_.-]{1,32}$/;

export function checkViews(views: readonly ViewSpec[]): readonly ViewSpec[] {
  if (views.length === 0) throw bad('views', 'must name at least one window', views);
  const seen = new Set<string>();
  views.forEach((v, i) => {
    if (typeof v.name !== 'string' || !VIEW_NAME.test(v.name)) throw bad(`views[${i}].name`, 'must be 1-32 letters, digits, "_", "." or "-" (e.g. 5m)', v.name);
    if (seen.has(v.name)) throw bad(`views[${i}].name`, `repeats ${JSON.stringify(v.name)}`, v.name);
    seen.add(v.name);
    if (!(Number.isSafeInteger(v.durationMs) && v.durationMs > 0)) throw bad(`views[${i}].durationMs`, 'must be a positive whole number of milliseconds', v.durationMs);
  });
  return Object.freeze(views.map((v) => Object.freeze({ name: v.name, durationMs: v.durationMs })));
}

export function checkQuantiles(levels: readonly number[], option: string): readonly number[] {
  if (levels.length === 0) throw bad(option, 'must hold at least one level', levels);
  levels.forEach((q, i) => {
    if (!(typeof q === 'number' && q >= 0 && q <= 1)) throw bad(`${option}[${i}]`, 'must be a number in [0, 1]', q);
  });
  if (new Set(levels).size !== levels.length) throw bad(option, 'holds a level twice', levels);
  return Object.freeze([...levels]);
}

/**
 * A threshold or level as a plain decimal label value: `0.1`, `0.0000001`, never `1e-7`. Label values are
 * matched as text in queries and alert rules, so one number must always be written one way.
 */
export function decimalLabel(x: number): string {
  const text = String(x);
  const e = text.indexOf('e');
  if (e < 0) return text;
  const exponent = Number(text.slice(e + 1));
  const mantissa = text.slice(0, e);
  const negative = mantissa.startsWith('-');
  const unsigned = negative ? mantissa.slice(1) : mantissa;
  const dot = unsigned.indexOf('.');
  const digits = unsigned.replace('.', '');
  // Where the decimal point lands once the exponent is applied, counted in digits from the left.
  const point = (dot < 0 ? unsigned.length : dot) + exponent;
  const body =
    point <= 0
      ? `0.${'0'.repeat(-point)}${digits}`
      : point >= digits.length
        ? `${digits}${'0'.repeat(point - digits.length)}`
        : `${digits.slice(0, point)}.${digits.slice(point)}`;
  return negative ? `-${body}` : body;
}
