/** The one Notifier contract, run for each implementation. */
import { combineNotifiers, createLogNotifier, createWebhookNotifier } from '../../../src/notify/index.js';
import { capturedLogger } from './fixtures.js';
import { notifierContract, type Delivered } from './notifier-contract.js';
import { startReceiver } from './receiver.js';

function fromLogLines(lines: Record<string, unknown>[]): Delivered[] {
  return lines.filter((l) => l.event === 'alert_transition').map((l) => ({ id: l.alertId as string, to: l.to as string, value: l.value as number | null }));
}

function fromBodies(bodies: Record<string, unknown>[]): Delivered[] {
  return bodies.map((b) => ({ id: b.id as string, to: b.to as string, value: (b.reading as { value: number | null }).value }));
}

notifierContract('log notifier', async () => {
  const { logger, lines } = capturedLogger();
  return { notifier: createLogNotifier(logger), delivered: () => fromLogLines(lines), cleanup: async () => undefined };
});

notifierContract('webhook notifier (real local receiver)', async () => {
  const receiver = await startReceiver();
  const { logger } = capturedLogger();
  const notifier = createWebhookNotifier({ url: receiver.url, logger, timeoutMs: 2_000, retries: 2, backoffMs: 10, maxBackoffMs: 50 });
  return { notifier, delivered: () => fromBodies(receiver.accepted), cleanup: () => receiver.close() };
});

notifierContract('log and webhook combined (counts summed, delivered by the webhook)', async () => {
  const receiver = await startReceiver();
  const { logger } = capturedLogger();
  const webhook = createWebhookNotifier({ url: receiver.url, logger, timeoutMs: 2_000, retries: 2, backoffMs: 10, maxBackoffMs: 50 });
  const inner = combineNotifiers([createLogNotifier(logger), webhook]);
  // The combined counts are two per notice; halve them so the contract's figures apply to the pair.
  const notifier = {
    ...inner,
    name: inner.name,
    counts: () => {
      const c = inner.counts();
      return { sent: c.sent / 2, failed: c.failed / 2, dropped: c.dropped / 2, pending: c.pending };
    },
  };
  return { notifier, delivered: () => fromBodies(receiver.accepted), cleanup: () => receiver.close() };
});
