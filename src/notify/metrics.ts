/**
 * The notifiers' counts as Prometheus families, read when Prometheus scrapes (as src/serve/metrics.ts
 * does): the notifier keeps the exact count, collect() hands it over.
 */
import { Counter, Gauge } from 'prom-client';
import type { Registry } from 'prom-client';
import { NOTIFICATION_OUTCOMES, type Notifier } from './notifier.js';

export const NOTIFICATION_METRICS = Object.freeze(['headroom_alert_notifications_total', 'headroom_alert_notifications_pending']);

/** Registers both families on `registry`; each notifier is one `notifier` label value (its name). */
export function registerNotificationMetrics(registry: Registry, notifiers: readonly Notifier[]): readonly string[] {
  new Counter({
    name: 'headroom_alert_notifications_total',
    help: 'Alert notices by notifier and outcome: sent (delivered), failed (given up on), dropped (queue full or closed).',
    labelNames: ['notifier', 'outcome'] as const,
    registers: [registry],
    collect(this: Counter<'notifier' | 'outcome'>) {
      this.reset();
      for (const n of notifiers) {
        const counts = n.counts();
        for (const outcome of NOTIFICATION_OUTCOMES) this.inc({ notifier: n.name, outcome }, counts[outcome]);
      }
    },
  });
  new Gauge({
    name: 'headroom_alert_notifications_pending',
    help: 'Alert notices queued or in flight, by notifier.',
    labelNames: ['notifier'] as const,
    registers: [registry],
    collect(this: Gauge<'notifier'>) {
      this.reset();
      for (const n of notifiers) this.set({ notifier: n.name }, n.counts().pending);
    },
  });
  return NOTIFICATION_METRICS;
}
