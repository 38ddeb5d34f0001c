/**
 * The `headroom-reference/1` file (DESIGN.md, "Reference file"): one model version's margins on its
 * reference data, as plain JSON. This schema is the one statement of the layout; the writer's types are
 * inferred from it, so what buildReference writes and what parseReference accepts cannot drift apart.
 *
 *     { "format": "headroom-reference/1", "model", "version", "createdAt", "source", "n",
 *       "thresholds": [0.1, 0.25], "segmentKeys": ["line"], "folded": { "line": 3 }, "timeRange": { "fromMs", "toMs" },
 *       "segments": { "all": Segment, "line=2": Segment, ... } }
 *     Segment: { "n", "confidence": SummaryState, "lowMargin": [{ "threshold", "count", "share", "lower", "upper" }],
 *       "decileEdges": [9 numbers], "labels": null | { "n", "signed": SummaryState,
 *       "errors": { "count", "share", "lower", "upper" }, "calibration": null | [10 bins] } }
 *
 * Digest states are checked by src/sketch (parseSummaryState) rather than here: that module owns their
 * invariants. Figures stored twice (a low-margin count here and in the digest summary) are checked to
 * agree by load.ts, so a hand edit that changes one and not the other is caught.
 */
import { z } from 'zod';
import type { SummaryState } from '../sketch/index.js';

export const REFERENCE_FORMAT = 'headroom-reference/1';
export const REFERENCE_FORMAT_FAMILY = 'headroom-reference/';

/** The ten equal-width bins of calibration (as scikit-learn's calibration_curve with n_bins=10). */
export const CALIBRATION_BINS = 10;
/** PSI cuts at the reference's 10 %, ..., 90 % quantiles: ten equal-mass bins. */
export const DECILE_LEVELS: readonly number[] = Object.freeze([0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9]);

const count = z.int().nonnegative();
const unit = z.number().min(0).max(1);

// Structure only; load.ts hands the value to src/sketch, which names the exact field it refuses.
const summaryState = z.custom<SummaryState>((v) => typeof v === 'object' && v !== null && !Array.isArray(v), {
  message: 'expected a digest summary object',
});

const interval = { share: unit, lower: unit, upper: unit };

const lowMarginEntry = z.object({ threshold: z.number(), count, ...interval });

const calibrationBin = z.object({
  lower: unit,
  upper: unit,
  count,
  positives: count,
  /** null for an empty bin: there is nothing to average. */
  meanPredicted: unit.nullable(),
  observedRate: unit.nullable(),
});

const labels = z.object({
  /** Events whose label and score gave a signed margin. */
  n: count,
  signed: summaryState,
  /** Signed margin <= 0: the prediction was wrong (or on the boundary). */
  errors: z.object({ count, ...interval }),
  /** null when no event had a probability or logit score with a binary label. */
  calibration: z.array(calibrationBin).nullable(),
});

const segment = z.object({
  n: z.int().positive(),
  confidence: summaryState,
  lowMargin: z.array(lowMarginEntry),
  decileEdges: z.array(unit),
  labels: labels.nullable(),
});

export const referenceSchema = z.object({
  format: z.literal(REFERENCE_FORMAT),
  model: z.string().min(1),
  version: z.string().min(1),
  createdAt: z.iso.datetime({ offset: true }),
  source: z.string(),
  n: z.int().positive(),
  thresholds: z.array(z.number()),
  segmentKeys: z.array(z.string().min(1)),
  /** Per segment key, how many rare values were folded into its `k=other` segment. */
  folded: z.record(z.string(), z.int().positive()),
  timeRange: z.object({ fromMs: count, toMs: count }),
  segments: z.record(z.string().min(1), segment),
});

export type ReferenceFile = z.infer<typeof referenceSchema>;
export type SegmentRecord = z.infer<typeof segment>;
export type LabelsRecord = z.infer<typeof labels>;
export type CalibrationBin = z.infer<typeof calibrationBin>;
export type LowMarginEntry = z.infer<typeof lowMarginEntry>;

/** The whole-version series, present in every file; a live segment without its own falls back to it. */
export const ALL_SEGMENT = 'all';
