/** A summary of the resolved configuration for the start-up log and `--print-config`; secrets redacted. */
import { formatDuration } from './durations.js';
import type { HeadroomConfig } from './types.js';

const list = (items: readonly string[]): string => (items.length === 0 ? '(none)' : items.join(', '));

export function describeConfig(config: HeadroomConfig): string {
  const k = config.kafka;
  const tls = k.tls === null
    ? 'off'
    : [`on`, k.tls.ca === null ? 'system CAs' : `ca ${k.tls.ca}`, ...(k.tls.cert === null ? [] : [`client cert ${k.tls.cert}`]), ...(k.tls.rejectUnauthorized ? [] : ['ANY CERTIFICATE ACCEPTED'])].join(', ');
  // The password is never printed, only where it came from, so the log still shows which one was used.
  const sasl = k.sasl === null ? 'off' : `${k.sasl.mechanism}, user ${k.sasl.username}, password ${String(k.sasl.password)} (from ${k.sasl.password.origin})`;
  const h = config.history;
  const lines = [
    `configuration ${config.source}`,
    `kafka: brokers ${list(k.brokers)}; client ${k.clientId}; group ${k.groupId}`,
    `  topics ${list(k.topics)}; outcomes ${list(k.outcomeTopics)}; dead letters ${k.deadLetterTopic ?? '(not copied)'}`,
    `  tls ${tls}; sasl ${sasl}; session timeout ${formatDuration(k.sessionTimeoutMs)}, heartbeat every ${formatDuration(k.heartbeatIntervalMs)}`,
    ...config.models.map(
      (m) =>
        `model ${m.name}: thresholds ${m.thresholds.join(', ')}; segments ${list(m.segmentKeys)}; max series ${m.maxSeries}; reference ${m.reference ?? '(none)'}`,
    ),
    `windows ${config.windows.map((w) => w.name).join(', ')}; lateness ${formatDuration(config.latenessMs)}; max future ${formatDuration(config.maxFutureMs)}`,
    `history: ${formatDuration(h.bucketMs)} buckets for ${formatDuration(h.fineSpanMs)}, then ${formatDuration(h.coarseBucketMs)} buckets up to ${formatDuration(h.retentionMs)}`,
    `checkpoint ${config.checkpoint.store === 'kafka' ? `on topic ${config.checkpoint.topic} (alert state in ${config.checkpoint.dir})` : config.checkpoint.dir} every ${formatDuration(config.checkpoint.intervalMs)}`,
    `references reloaded on SIGHUP${config.referenceReload.watchFiles ? ` and on a file change (after ${formatDuration(config.referenceReload.debounceMs)} of quiet)` : ' only (referenceReload.watchFiles: false)'}`,
    `http ${config.http.host}:${config.http.port}`,
    `decode: max ${config.decode.maxBytes} bytes, text ${config.decode.maxTextLength}, id ${config.decode.maxIdLength}, segment keys ${config.decode.maxSegmentKeys}`,
  ];
  return lines.join('\n');
}
