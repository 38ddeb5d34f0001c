/**
 * One structured log line per transition: warn when the alert enters firing (someone should look),
 * info for every other move. The fields are noticeLogFields (notice.ts), the same names on every line.
 */
import type { Logger } from 'pino';
import { noticeLogFields, type AlertNotice } from './notice.js';
import type { NotificationCounts, Notifier } from './notifier.js';

export function createLogNotifier(logger: Logger): Notifier {
  const log = logger.child({ component: 'alerts' });
  const counts = { sent: 0, failed: 0, dropped: 0 };
  let closed: Promise<void> | undefined;
  let warnedClosed = false;
  return {
    name: 'log',
    notify(notice: AlertNotice): void {
      if (closed !== undefined) {
        counts.dropped += 1;
        if (!warnedClosed) log.warn({ event: 'alert_notice_after_close' }, 'alert notifier is closed; later notices are dropped and counted');
        warnedClosed = true;
        return;
      }
      try {
        const fields = noticeLogFields(notice);
        const t = notice.transition;
        const msg = `alert ${t.rule} ${t.series.model}/${t.series.version}/${t.series.segment}: ${t.from} -> ${t.to}`;
        if (t.to === 'firing') log.warn({ event: 'alert_transition', ...fields }, msg);
        else log.info({ event: 'alert_transition', ...fields }, msg);
        counts.sent += 1;
      } catch (error) {
        counts.failed += 1;
        safeError(log, error);
      }
    },
    flush: async () => true,
    close() {
      closed ??= Promise.resolve();
      return closed;
    },
    counts: (): NotificationCounts => ({ ...counts, pending: 0 }),
  };
}

function safeError(log: Logger, error: unknown): void {
  try {
    log.error({ event: 'alert_notice_invalid', err: error instanceof Error ? error.message : String(error) }, 'an alert notice could not be logged; it is counted as failed');
  } catch {
    // A logger that throws leaves nothing to report to; notify() still must not throw.
  }
}
