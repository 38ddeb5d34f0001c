/** Alert notifications: the notice and its webhook body (pure), a log notifier, a webhook notifier, their metrics and config. */
export { WEBHOOK_FORMAT, describeRule, noticeLogFields, noticeOf, seriesLink, webhookBody } from './notice.js';
export type { AlertNotice, NoticeOptions, WebhookBody } from './notice.js';
export { NOTIFICATION_OUTCOMES, combineNotifiers } from './notifier.js';
export type { NotificationCounts, NotificationOutcome, Notifier } from './notifier.js';
export { backoffDelayMs, retryAfterMs } from './backoff.js';
export type { BackoffPolicy } from './backoff.js';
export { WEBHOOK_CONFIG_KEYS, WEBHOOK_DEFAULTS, WEBHOOK_TOKEN_ENV, linkBaseSchema, webhookSectionSchema } from './config.js';
export type { WebhookSection } from './config.js';
export { createLogNotifier } from './log-notifier.js';
export { createWebhookNotifier, webhookOptionsFrom } from './webhook.js';
export type { WebhookNotifierOptions } from './webhook.js';
export { NOTIFICATION_METRICS, registerNotificationMetrics } from './metrics.js';
