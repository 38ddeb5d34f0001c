/**
 * What one bucket (or one view) knows about its labelled predictions: the signed margins (a digest for
 * their shape, exact counts at and below each θ of the margin-loss grid), and, for predictions that state
 * a probability of the positive class, the reliability bins. Pure.
 *
 * The grid counts signed margin <= θ (not <): a signed margin of exactly 0 (p = 0.5) is a mistake, and
 * the error rate is the grid's θ = 0 entry, counted, never read off the digest.
 */
import { CalibrationCounts } from '../reference/index.js';
import { CALIBRATION_BINS } from '../reference/format.js';
import { MarginSummary } from '../sketch/index.js';
import type { SummaryState } from '../sketch/index.js';
import { badState } from './fail.js';

/** θ of the margin-loss curve P(signed margin <= θ). 0 is the error rate. */
export const MARGIN_LOSS_GRID: readonly number[] = Object.freeze([-0.5, -0.25, 0, 0.1, 0.2, 0.3, 0.5, 0.75]);
const ERROR_INDEX = MARGIN_LOSS_GRID.indexOf(0);

export interface LabelSummaryState {
  readonly signed: SummaryState;
  /** Per θ of MARGIN_LOSS_GRID, labelled predictions with signed margin <= θ. */
  readonly atOrBelow: readonly number[];
  readonly calibration: { readonly counts: number[]; readonly positives: number[]; readonly sums: number[] } | null;
}

export class LabelSummary {
  private signedSummary: MarginSummary;
  private readonly atOrBelow = new Float64Array(MARGIN_LOSS_GRID.length);
  private calibrationCounts: CalibrationCounts | undefined;

  constructor(readonly compression: number) {
    this.signedSummary = new MarginSummary({ compression });
  }

  /** `p`: the predicted probability of the positive class, for probability and logit scores; else undefined. */
  add(signed: number, p: number | undefined, positive: boolean): void {
    this.signedSummary.add(signed + 0);
    for (let i = MARGIN_LOSS_GRID.length - 1; i >= 0 && signed <= (MARGIN_LOSS_GRID[i] as number); i -= 1) {
      this.atOrBelow[i] = (this.atOrBelow[i] as number) + 1;
    }
    if (p !== undefined) (this.calibrationCounts ??= new CalibrationCounts()).add(p, positive);
  }

  merge(other: LabelSummary): void {
    this.signedSummary.merge(other.signedSummary);
    for (let i = 0; i < MARGIN_LOSS_GRID.length; i += 1) this.atOrBelow[i] = (this.atOrBelow[i] as number) + (other.atOrBelow[i] as number);
    if (other.calibrationCounts !== undefined) (this.calibrationCounts ??= new CalibrationCounts()).merge(other.calibrationCounts);
  }

  get count(): number {
    return this.signedSummary.count;
  }

  /** Labelled predictions with signed margin <= 0. */
  get wrong(): number {
    return this.atOrBelow[ERROR_INDEX] as number;
  }

  get signed(): MarginSummary {
    return this.signedSummary;
  }

  /** Counts at and below each θ of MARGIN_LOSS_GRID. */
  lossCounts(): readonly number[] {
    return [...this.atOrBelow];
  }

  /** Undefined when no labelled prediction stated a probability. */
  get calibration(): CalibrationCounts | undefined {
    return this.calibrationCounts;
  }

  toState(): LabelSummaryState {
    return { signed: this.signedSummary.toState(), atOrBelow: [...this.atOrBelow], calibration: this.calibrationCounts?.toState() ?? null };
  }

  static fromState(value: unknown, path: string): LabelSummary {
    const v = value as Partial<LabelSummaryState> | null;
    if (typeof v !== 'object' || v === null) throw badState(path, 'must be an object');
    const signed = MarginSummary.fromState(v.signed, `${path}.signed`);
    const out = new LabelSummary(signed.settings().compression ?? 100);
    out.signedSummary = signed;
    const below = v.atOrBelow;
    if (!Array.isArray(below) || below.length !== MARGIN_LOSS_GRID.length || !below.every((n) => Number.isSafeInteger(n) && n >= 0 && n <= signed.count)) {
      throw badState(`${path}.atOrBelow`, `must hold ${MARGIN_LOSS_GRID.length} counts, each between 0 and the signed count`);
    }
    for (let i = 1; i < below.length; i += 1) if ((below[i] as number) < (below[i - 1] as number)) throw badState(`${path}.atOrBelow`, 'must not decrease along the grid');
    out.atOrBelow.set(below);
    const c = v.calibration;
    if (c !== null && c !== undefined) {
      const ok = (a: unknown): a is number[] => Array.isArray(a) && a.length === CALIBRATION_BINS && a.every((n) => typeof n === 'number' && Number.isFinite(n) && n >= 0);
      if (!ok(c.counts) || !ok(c.positives) || !ok(c.sums) || c.positives.some((n, i) => n > (c.counts[i] as number))) {
        throw badState(`${path}.calibration`, `must hold ${CALIBRATION_BINS} counts, positives (<= counts) and sums`);
      }
      out.calibrationCounts = CalibrationCounts.fromState(c);
    }
    return out;
  }
}
