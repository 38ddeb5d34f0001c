export { binaryMargin, clampUnit, confidenceMargin, isBinaryScore, predictedLabel, topTwoGap } from './margin.js';
export type { BinaryScore, ClassesScore, PredictedLabel } from './margin.js';
export { binaryLabelSign, className, measureMargins, signedMargin } from './signed.js';
export type { Margins, MarginsResult, SignedMarginResult } from './signed.js';
