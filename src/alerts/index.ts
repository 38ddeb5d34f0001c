/** Alert rules: config section, readings, the shared lifecycle, the early-warning chart and the saved book. Pure. */
export {
  ALERT_CONFIG_KEYS,
  ALERT_DEFAULTS,
  ANY_MODEL,
  DEFAULT_ALERTS_SECTION,
  alertRulesSchema,
  alertsSectionSchema,
  checkAlertRules,
  parseAlertsSection,
} from './config.js';
export type { AlertRule, AlertRuleContext, AlertsSection, DriftRule, EarlyWarningRule, ShareRiseRule } from './config.js';
export { ALERT_PHASES, INITIAL_LIFECYCLE, stepLifecycle, transitionId, verdictOf } from './lifecycle.js';
export type { AlertPhase, AlertTransition, LifecycleState, LifecycleTiming, Reading, SeriesRef, StepResult, Verdict } from './lifecycle.js';
export { driftInputOf, driftReading, shareRiseReading } from './readings.js';
export type { DriftInput, ShareRiseInput } from './readings.js';
export { THRESHOLD_RESOLUTION, batchStep, cusumThreshold, feedEarlyWarning } from './early-warning.js';
export type { ChartResult, ChartState, ClosedBucket, EarlyWarningInput, ThresholdFor } from './early-warning.js';
export { ALERT_STATE_FORMAT, AlertBook, ruleApplies } from './book.js';
export { alertInput, evaluateAlerts } from './evaluate.js';
export type { AlertFailure, AlertSeries, Evaluation, NamedView } from './evaluate.js';
export type { AlertBookOptions, AlertBookState, AlertInput, AlertStatus, SavedAlert } from './book.js';
