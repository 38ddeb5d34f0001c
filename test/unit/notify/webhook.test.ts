/**
 * The webhook notifier against a real HTTP receiver on 127.0.0.1 (node:http, no stand-in for fetch):
 * answers, retries and their spacing, Retry-After, refusals, a receiver that hangs or is not there yet,
 * the bounded queue, order per alert, and a token that reaches the receiver and no log line.
 * Timeouts and backoffs are tens of ms; time is only ever checked as a lower bound.
 */
import { afterEach, describe, expect, it } from 'vitest';
import { HeadroomError } from '../../../src/errors.js';
import { createWebhookNotifier, webhookOptionsFrom, webhookSectionSchema, WEBHOOK_FORMAT, WEBHOOK_TOKEN_ENV } from '../../../src/notify/index.js';
import type { Notifier, WebhookNotifierOptions } from '../../../src/notify/index.js';
import { capturedLogger, notice, SERIES, until } from './fixtures.js';
import { closedPort, startReceiver, type Receiver, type Script } from './receiver.js';

// Timers may fire a millisecond or so off what performance.now() measures; lower bounds allow for it.
const SLACK_MS = 3;

describe('createWebhookNotifier', () => {
  const receivers: Receiver[] = [];
  const notifiers: Notifier[] = [];
  afterEach(async () => {
    await Promise.all(notifiers.splice(0).map((n) => n.close()));
    await Promise.all(receivers.splice(0).map((r) => r.close()));
  });

  async function setup(script: Script, options: Partial<WebhookNotifierOptions> = {}) {
    const receiver = await startReceiver(script);
    receivers.push(receiver);
    const log = capturedLogger();
    const notifier = createWebhookNotifier({ url: receiver.url, logger: log.logger, timeoutMs: 2_000, retries: 3, backoffMs: 20, maxBackoffMs: 200, random: () => 1, ...options });
    notifiers.push(notifier);
    return { receiver, notifier, ...log };
  }

  const events = (lines: Record<string, unknown>[], event: string) => lines.filter((l) => l.event === event);

  it('POSTs the headroom-alert/1 body as JSON with the transition id as Idempotency-Key', async () => {
    const { receiver, notifier } = await setup(() => ({ status: 200 }));
    const n = notice(2);
    notifier.notify(n);
    expect(await notifier.flush(5_000)).toBe(true);
    expect(receiver.requests).toHaveLength(1);
    const [req] = receiver.requests;
    expect(req?.headers['content-type']).toBe('application/json');
    expect(req?.headers['idempotency-key']).toBe(n.transition.id);
    expect(req?.headers.authorization).toBeUndefined();
    expect(req?.body).toMatchObject({ format: WEBHOOK_FORMAT, id: n.transition.id, seq: 2, from: 'brewing', to: 'firing', raised: true, series: SERIES });
    expect(notifier.counts()).toEqual({ sent: 1, failed: 0, dropped: 0, pending: 0 });
  });

  it('retries a 500 with the same Idempotency-Key, after the backoff', async () => {
    const { receiver, notifier, lines } = await setup((i) => ({ status: i < 2 ? 500 : 200 }), { backoffMs: 30 });
    notifier.notify(notice(1));
    expect(await notifier.flush(5_000)).toBe(true);
    expect(receiver.requests).toHaveLength(3);
    const keys = new Set(receiver.requests.map((r) => r.headers['idempotency-key']));
    expect([...keys]).toEqual([notice(1).transition.id]);
    // random() = 1 keeps the whole step: 30 ms, then 60 ms.
    const [a, b, c] = receiver.requests.map((r) => r.atMs) as [number, number, number];
    expect(b - a).toBeGreaterThanOrEqual(30 - SLACK_MS);
    expect(c - b).toBeGreaterThanOrEqual(60 - SLACK_MS);
    expect(events(lines, 'alert_webhook_retry').map((l) => l.retryInMs)).toEqual([30, 60]);
    expect(notifier.counts()).toMatchObject({ sent: 1, failed: 0 });
  });

  it('honours a 429 Retry-After, capped by maxRetryAfterMs', async () => {
    const { receiver, notifier, lines } = await setup((i) => (i === 0 ? { status: 429, headers: { 'retry-after': '1' } } : { status: 200 }), { backoffMs: 5, maxRetryAfterMs: 120 });
    notifier.notify(notice(1));
    expect(await notifier.flush(5_000)).toBe(true);
    expect(receiver.requests).toHaveLength(2);
    const [a, b] = receiver.requests.map((r) => r.atMs) as [number, number];
    expect(b - a).toBeGreaterThanOrEqual(120 - SLACK_MS);
    expect(events(lines, 'alert_webhook_retry').map((l) => l.retryInMs)).toEqual([120]);
  });

  it('a Retry-After of 0 overrides a long backoff (the test would time out otherwise)', async () => {
    const { receiver, notifier } = await setup((i) => (i === 0 ? { status: 503, headers: { 'retry-after': '0' } } : { status: 200 }), { backoffMs: 60_000, maxBackoffMs: 60_000 });
    notifier.notify(notice(1));
    expect(await notifier.flush(5_000)).toBe(true);
    expect(receiver.requests).toHaveLength(2);
  });

  it('does not retry a 400: one request, one error line, counted as failed; the next notice still goes', async () => {
    const { receiver, notifier, lines } = await setup((i) => ({ status: i === 0 ? 400 : 200 }));
    notifier.notify(notice(1));
    notifier.notify(notice(2));
    expect(await notifier.flush(5_000)).toBe(true);
    expect(receiver.requests.map((r) => r.body.seq)).toEqual([1, 2]);
    const rejected = events(lines, 'alert_webhook_rejected');
    expect(rejected).toHaveLength(1);
    expect(rejected[0]).toMatchObject({ status: 400, alertId: notice(1).transition.id, level: 50 });
    expect(notifier.counts()).toEqual({ sent: 1, failed: 1, dropped: 0, pending: 0 });
  });

  it('does not follow a redirect: a 3xx is refused like a 4xx', async () => {
    const { receiver, notifier, lines } = await setup(() => ({ status: 307, headers: { location: 'http://127.0.0.1:1/elsewhere' } }));
    notifier.notify(notice(1));
    expect(await notifier.flush(5_000)).toBe(true);
    expect(receiver.requests).toHaveLength(1);
    expect(String(events(lines, 'alert_webhook_rejected')[0]?.msg)).toContain('redirects are not followed');
    expect(notifier.counts().failed).toBe(1);
  });

  it('gives up after `retries` retries of a 503 and says so once', async () => {
    const { receiver, notifier, lines } = await setup(() => ({ status: 503 }), { retries: 2, backoffMs: 5 });
    notifier.notify(notice(1));
    expect(await notifier.flush(5_000)).toBe(true);
    expect(receiver.requests).toHaveLength(3);
    expect(events(lines, 'alert_webhook_gave_up')).toEqual([expect.objectContaining({ attempts: 3, alertId: notice(1).transition.id })]);
    expect(notifier.counts()).toEqual({ sent: 0, failed: 1, dropped: 0, pending: 0 });
  });

  it('times out an attempt that gets no answer and retries it', async () => {
    const { receiver, notifier, lines } = await setup((i) => (i === 0 ? 'hang' : { status: 200 }), { timeoutMs: 50, backoffMs: 5 });
    notifier.notify(notice(1));
    expect(await notifier.flush(5_000)).toBe(true);
    expect(receiver.requests).toHaveLength(2);
    const [a, b] = receiver.requests.map((r) => r.atMs) as [number, number];
    expect(b - a).toBeGreaterThanOrEqual(50 - SLACK_MS);
    expect(String(events(lines, 'alert_webhook_retry')[0]?.msg)).toContain('no answer within 50 ms');
    expect(receiver.requests[1]?.headers['idempotency-key']).toBe(receiver.requests[0]?.headers['idempotency-key']);
    expect(notifier.counts()).toMatchObject({ sent: 1, failed: 0 });
  });

  it('retries while the receiver is down (connection refused) and delivers once it is up', async () => {
    const port = await closedPort();
    const { logger, lines } = capturedLogger();
    const notifier = createWebhookNotifier({ url: `http://127.0.0.1:${port}/hooks/alerts`, logger, timeoutMs: 1_000, retries: 20, backoffMs: 10, maxBackoffMs: 40, random: () => 1 });
    notifiers.push(notifier);
    notifier.notify(notice(1));
    await until('two refused attempts', () => events(lines, 'alert_webhook_retry').length >= 2);
    expect(String(events(lines, 'alert_webhook_retry')[0]?.msg)).toContain('ECONNREFUSED');
    const receiver = await startReceiver(() => ({ status: 200 }), port);
    receivers.push(receiver);
    expect(await notifier.flush(5_000)).toBe(true);
    expect(receiver.accepted.map((b) => b.id)).toEqual([notice(1).transition.id]);
    expect(notifier.counts()).toMatchObject({ sent: 1, failed: 0, dropped: 0 });
  });

  it('drops the oldest waiting notice when the queue is full, logs and counts it', async () => {
    let hold = true;
    const { receiver, notifier, lines } = await setup((i) => (i === 0 && hold ? 'hang' : { status: 200 }), { queueSize: 3 });
    notifier.notify(notice(1));
    await until('the first request to arrive', () => receiver.requests.length === 1);
    for (const seq of [2, 3, 4, 5, 6]) notifier.notify(notice(seq));
    expect(notifier.counts()).toEqual({ sent: 0, failed: 0, dropped: 2, pending: 4 });
    expect(events(lines, 'alert_webhook_queue_full').map((l) => l.alertId)).toEqual([notice(2).transition.id, notice(3).transition.id]);
    hold = false;
    receiver.release(200);
    expect(await notifier.flush(5_000)).toBe(true);
    expect(receiver.requests.map((r) => r.body.seq)).toEqual([1, 4, 5, 6]);
    expect(notifier.counts()).toEqual({ sent: 4, failed: 0, dropped: 2, pending: 0 });
  });

  it('keeps each alert in order through retries: no transition overtakes the one before it', async () => {
    const line = (k: number) => ({ ...SERIES, segment: `line=${k}` });
    // Every third request fails once; the retry must come before anything queued after it.
    const { receiver, notifier } = await setup((i) => ({ status: i % 3 === 0 ? 502 : 200 }), { backoffMs: 2, retries: 5 });
    const sent: string[] = [];
    for (let seq = 1; seq <= 5; seq++) {
      for (let k = 1; k <= 3; k++) {
        const n = notice(seq, 'early', line(k));
        sent.push(n.transition.id);
        notifier.notify(n);
      }
    }
    expect(await notifier.flush(10_000)).toBe(true);
    expect(receiver.accepted.map((b) => b.id)).toEqual(sent);
    for (let k = 1; k <= 3; k++) {
      const seqs = receiver.accepted.filter((b) => (b.series as { segment: string }).segment === `line=${k}`).map((b) => b.seq);
      expect(seqs).toEqual([1, 2, 3, 4, 5]);
    }
  });

  it('sends the token as a bearer header and never writes it, or an extra header value, to any log line', async () => {
    const token = 'tok-9f8e7d6c5b4a-SECRET';
    const apiKey = 'key-0a1b2c3d-PRIVATE';
    const section = webhookSectionSchema.parse({ url: 'http://127.0.0.1:1/x', timeout: '60ms', retries: 4, backoff: '5ms', maxBackoff: '10ms', headers: { 'X-Receiver-Key': apiKey } });
    // 500, a hang (timeout), 429, then 200 for the first notice; 400 for the second; nothing answers the third.
    const script: Script = (i) => (i === 0 ? { status: 500 } : i === 1 ? 'hang' : i === 2 ? { status: 429, headers: { 'retry-after': '0' } } : i === 4 ? { status: 400 } : { status: 200 });
    const receiver = await startReceiver(script);
    receivers.push(receiver);
    const { logger, raw, lines } = capturedLogger();
    const options = webhookOptionsFrom({ ...section, url: receiver.url }, { [WEBHOOK_TOKEN_ENV]: token }, logger);
    const notifier = createWebhookNotifier({ ...options, random: () => 1 });
    notifiers.push(notifier);
    notifier.notify(notice(1));
    notifier.notify(notice(2));
    expect(await notifier.flush(5_000)).toBe(true);
    const port = await closedPort();
    const refused = createWebhookNotifier({ ...options, url: `http://127.0.0.1:${port}/`, retries: 1 });
    notifiers.push(refused);
    refused.notify(notice(3));
    expect(await refused.flush(5_000)).toBe(true);
    await refused.close();
    await notifier.close();

    expect(receiver.requests.length).toBe(5);
    for (const r of receiver.requests) {
      expect(r.headers.authorization).toBe(`Bearer ${token}`);
      expect(r.headers['x-receiver-key']).toBe(apiKey);
    }
    // The run said a good deal (retries, a timeout, a refusal, a refused connection), none of it secret.
    expect(new Set(lines.map((l) => l.event))).toEqual(new Set(['alert_webhook_retry', 'alert_webhook_sent', 'alert_webhook_rejected', 'alert_webhook_gave_up']));
    for (const line of raw) {
      expect(line).not.toContain(token);
      expect(line).not.toContain(apiKey);
      expect(line).not.toContain('/hooks/alerts');
    }
    expect(lines.every((l) => typeof l.target === 'string' && (l.target as string).startsWith('http://127.0.0.1:'))).toBe(true);
  });

  it('close aborts an attempt in flight, drops what waits, and resolves without waiting for the receiver', async () => {
    const { receiver, notifier } = await setup(() => 'hang', { timeoutMs: 60_000 });
    notifier.notify(notice(1));
    notifier.notify(notice(2));
    await until('the first request to arrive', () => receiver.requests.length === 1);
    const flushed = notifier.flush(60_000);
    await notifier.close();
    expect(await flushed).toBe(true);
    expect(notifier.counts()).toEqual({ sent: 0, failed: 0, dropped: 2, pending: 0 });
  });

  it('flush resolves false when its time runs out first, and the notice is still delivered later', async () => {
    const { receiver, notifier } = await setup((i) => (i === 0 ? 'hang' : { status: 200 }), { timeoutMs: 150, backoffMs: 1 });
    notifier.notify(notice(1));
    expect(await notifier.flush(20)).toBe(false);
    expect(notifier.counts().pending).toBe(1);
    expect(await notifier.flush(5_000)).toBe(true);
    expect(receiver.accepted.map((b) => b.seq)).toEqual([1]);
  });

  it('refuses bad options with HR_ERR_NOTIFY_ARGUMENT, never quoting the token', () => {
    const { logger } = capturedLogger();
    const bad = (options: Partial<WebhookNotifierOptions>): HeadroomError => {
      try {
        createWebhookNotifier({ url: 'http://127.0.0.1:1/', logger, ...options });
      } catch (error) {
        if (error instanceof HeadroomError) return error;
        throw error;
      }
      throw new Error('accepted');
    };
    expect(bad({ url: 'ftp://example.org/' }).code).toBe('HR_ERR_NOTIFY_ARGUMENT');
    expect(bad({ url: 'not a url' }).message).toContain('url');
    expect(bad({ url: 'https://user:pw@example.org/' }).message).not.toContain('pw');
    expect(bad({ headers: { 'idempotency-key': 'x' } }).message).toContain('idempotency-key');
    expect(bad({ headers: { Authorization: 'Basic abc' } }).message).not.toContain('abc');
    expect(bad({ retries: -1 }).message).toContain('retries');
    const withNewline = bad({ token: 'secret-token\r\nX-Evil: 1' });
    expect(withNewline.code).toBe('HR_ERR_NOTIFY_ARGUMENT');
    expect(withNewline.message).not.toContain('secret-token');
  });
});
