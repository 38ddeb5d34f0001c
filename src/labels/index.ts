/** Labels: delayed outcomes joined to their predictions, and the label figures per series and view. */
export { LabelSummary, MARGIN_LOSS_GRID } from './label-summary.js';
export type { LabelSummaryState } from './label-summary.js';
export { LabelWindows } from './label-windows.js';
export type { LabelView, LabelWindowsState } from './label-windows.js';
export { JOIN_RESULTS, PendingLabels, emptyJoinCounts } from './pending.js';
export type { JoinCounts, Match, PendingOptions, PendingState, WaitingPrediction } from './pending.js';
export { expectedCalibrationError, labelFigures, positiveProbability } from './figures.js';
export type { LabelFigures } from './figures.js';
