import { inspect } from 'node:util';
import { describe, expect, it } from 'vitest';
import { describeConfig, modelFor, parseConfig } from '../../../src/config/index.js';
import { DEFAULT_DECODE_LIMITS } from '../../../src/events/index.js';
import { DEFAULT_WINDOW_CONFIG } from '../../../src/sketch/index.js';
import { caught, MINIMAL, problemsOf } from './helpers.js';

const FULL = `
kafka:
  brokers: ["b1.example:9093", "b2.example:9093"]
  clientId: headroom-eu
  groupId: headroom-eu
  topics: [scores-a, scores-b]
  outcomeTopics: [verdicts]
  deadLetterTopic: headroom-rejected
  tls: { ca: certs/ca.pem, rejectUnauthorized: true }
  sasl: { mechanism: scram-sha-256, username: svc-headroom }
models:
  - name: parcel-damage
    thresholds: [0.25, 0.1]
    segmentKeys: [line, site]
    reference: references/parcel-damage.json
    maxSeries: 50
  - name: "*"
    thresholds: [0.2]
windows: [10m, 1h, 2d]
history: { bucket: 30s, fineSpan: 1h, coarseBucket: 2h, retention: 2d }
lateness: 90s
maxFuture: 1m
checkpoint: { store: kafka, dir: /var/lib/headroom, topic: headroom-eu-state, interval: 10s }
http: { host: 0.0.0.0, port: 9500 }
decode: { maxBytes: 65536, maxSegmentKeys: 2 }
referenceReload: { watchFiles: false, debounce: 2s }
`;

describe('parseConfig: valid files', () => {
  it('fills every default into a minimal file', () => {
    const { config, warnings } = parseConfig(MINIMAL, 'headroom.yaml', {});
    expect(warnings).toEqual([]);
    expect(config.kafka).toEqual({
      brokers: ['127.0.0.1:9092'],
      clientId: 'headroom',
      groupId: 'headroom',
      topics: ['scored-events'],
      outcomeTopics: [],
      deadLetterTopic: null,
      tls: null,
      sasl: null,
      sessionTimeoutMs: 30_000,
      heartbeatIntervalMs: 3_000,
    });
    expect(config.models).toHaveLength(1);
    const [any] = config.models;
    expect(any).toMatchObject({ name: '*', thresholds: [0.1, 0.25], segmentKeys: [], reference: null, maxSeries: 200 });
    expect(any?.window).toEqual({ ...DEFAULT_WINDOW_CONFIG, thresholds: [0.1, 0.25] });
    expect(config.windows).toEqual([
      { name: '5m', durationMs: 300_000 },
      { name: '1h', durationMs: 3_600_000 },
      { name: '24h', durationMs: 86_400_000 },
    ]);
    expect(config.history).toEqual({ bucketMs: 60_000, fineSpanMs: 7_200_000, coarseBucketMs: 3_600_000, retentionMs: 86_400_000 });
    expect(config.latenessMs).toBe(120_000);
    expect(config.maxFutureMs).toBe(300_000);
    expect(config.checkpoint).toEqual({ store: 'file', dir: './state', topic: 'headroom-state', intervalMs: 5_000 });
    expect(config.http).toEqual({ host: '127.0.0.1', port: 9464 });
    expect(config.referenceReload).toEqual({ watchFiles: true, debounceMs: 500 });
    expect(config.decode).toEqual(DEFAULT_DECODE_LIMITS);
    expect(config.source).toBe('headroom.yaml');
  });

  it('takes every field of a full file, with thresholds sorted and each model given its window config', () => {
    const { config, warnings } = parseConfig(FULL, 'full.yaml', { HEADROOM_KAFKA_SASL_PASSWORD: 'pw' });
    expect(warnings).toEqual([]);
    expect(config.kafka).toMatchObject({
      brokers: ['b1.example:9093', 'b2.example:9093'],
      clientId: 'headroom-eu',
      groupId: 'headroom-eu',
      topics: ['scores-a', 'scores-b'],
      outcomeTopics: ['verdicts'],
      deadLetterTopic: 'headroom-rejected',
      tls: { ca: 'certs/ca.pem', cert: null, key: null, rejectUnauthorized: true, servername: null },
    });
    expect(config.kafka.sasl?.mechanism).toBe('scram-sha-256');
    expect(config.kafka.sasl?.username).toBe('svc-headroom');
    expect(config.kafka.sasl?.password.reveal()).toBe('pw');
    const [damage, any] = config.models;
    expect(damage).toMatchObject({ name: 'parcel-damage', thresholds: [0.1, 0.25], segmentKeys: ['line', 'site'], reference: 'references/parcel-damage.json', maxSeries: 50 });
    expect(damage?.window).toMatchObject({ bucketMs: 30_000, fineSpanMs: 3_600_000, coarseBucketMs: 7_200_000, retentionMs: 172_800_000, latenessMs: 90_000, maxFutureMs: 60_000, thresholds: [0.1, 0.25] });
    expect(any?.window.thresholds).toEqual([0.2]);
    expect(config.windows.map((w) => [w.name, w.durationMs])).toEqual([['10m', 600_000], ['1h', 3_600_000], ['2d', 172_800_000]]);
    expect(config.checkpoint).toEqual({ store: 'kafka', dir: '/var/lib/headroom', topic: 'headroom-eu-state', intervalMs: 10_000 });
    expect(config.http).toEqual({ host: '0.0.0.0', port: 9500 });
    expect(config.decode).toEqual({ ...DEFAULT_DECODE_LIMITS, maxBytes: 65_536, maxSegmentKeys: 2 });
    expect(config.referenceReload).toEqual({ watchFiles: false, debounceMs: 2_000 });
  });

  it('accepts an already parsed object as well as text', () => {
    const { config } = parseConfig({ kafka: { brokers: ['h:1'], topics: ['t'] }, http: { port: 0 } }, 'object', {});
    expect(config.kafka.brokers).toEqual(['h:1']);
    expect(config.http.port).toBe(0);
  });

  it('a model without an entry of its own falls to "*"; with no "*" it is not watched', () => {
    const { config } = parseConfig(`${MINIMAL}models: [{ name: parcel-damage, thresholds: [0.3] }, { name: "*" }]\n`, 'h.yaml', {});
    expect(modelFor(config, 'parcel-damage')?.thresholds).toEqual([0.3]);
    expect(modelFor(config, 'letter-sort')?.name).toBe('*');
    const only = parseConfig(`${MINIMAL}models: [{ name: parcel-damage }]\n`, 'h.yaml', {}).config;
    expect(modelFor(only, 'letter-sort')).toBeUndefined();
  });
});

describe('parseConfig: each error names the file and the field, with the fix', () => {
  it('a threshold outside (0, 1), with the line it is on', () => {
    const text = `${MINIMAL}models:\n  - name: parcel-damage\n    thresholds: [0.1, 1.5]\n`;
    expect(problemsOf(text)).toEqual(['headroom.yaml: models[0].thresholds[1]: must be in (0, 1), got 1.5 (line 6)']);
  });

  it('the same threshold twice', () => {
    expect(problemsOf(`${MINIMAL}models: [{ name: a, thresholds: [0.2, 0.2] }]\n`)).toEqual([expect.stringMatching(/^headroom\.yaml: models\[0\]\.thresholds: holds 0\.2 twice/)]);
  });

  it('missing brokers and topics, naming the variable that can supply brokers', () => {
    const lines = problemsOf('kafka: { clientId: x }\n');
    expect(lines).toContainEqual(expect.stringMatching(/^headroom\.yaml: kafka\.brokers: is required \(.*HEADROOM_KAFKA_BROKERS\)/));
    expect(lines).toContainEqual(expect.stringMatching(/^headroom\.yaml: kafka\.topics: is required/));
  });

  it('an empty file says kafka is required', () => {
    expect(problemsOf('')).toEqual([expect.stringMatching(/^headroom\.yaml: kafka: is required \(a mapping with at least brokers and topics\)/)]);
  });

  it('a file that is not a mapping', () => {
    expect(problemsOf('- a\n- b\n')).toEqual([expect.stringMatching(/^headroom\.yaml: \(top level\): must be a mapping, got a list/)]);
  });

  it('a misspelt key, with a suggestion', () => {
    expect(problemsOf(`${MINIMAL}widows: [5m]\n`)).toEqual(['headroom.yaml: widows: is not a setting here; did you mean "windows"? (line 4)']);
    expect(problemsOf(`${MINIMAL}models: [{ name: a, treshold: [0.1] }]\n`)).toEqual([expect.stringMatching(/models\[0\]\.treshold: is not a setting here; did you mean "thresholds"\?/)]);
  });

  it('a wrong type', () => {
    expect(problemsOf(`${MINIMAL}http: { port: "ninety" }\n`)).toEqual([expect.stringMatching(/^headroom\.yaml: http\.port: must be a number, got the string "ninety"/)]);
  });

  it('reference reload settings of the wrong type', () => {
    expect(problemsOf(`${MINIMAL}referenceReload: { watchFiles: "no", debounce: soon }\n`)).toEqual([
      'headroom.yaml: referenceReload.watchFiles: must be true or false, got the string "no" (line 4)',
      expect.stringMatching(/^headroom\.yaml: referenceReload\.debounce: must be a duration with a unit.*got "soon"/),
    ]);
  });

  it('a port out of range', () => {
    expect(problemsOf(`${MINIMAL}http: { port: 70000 }\n`)).toEqual(['headroom.yaml: http.port: must be at most 65535, got 70000 (line 4)']);
  });

  it('an unknown SASL mechanism', () => {
    expect(problemsOf(`${MINIMAL}  sasl: { mechanism: gssapi, username: u }\n`, { HEADROOM_KAFKA_SASL_PASSWORD: 'x' })).toEqual([
      expect.stringMatching(/^headroom\.yaml: kafka\.sasl\.mechanism: must be one of plain, scram-sha-256, scram-sha-512, got the string "gssapi"/),
    ]);
  });

  it('a duration without a unit, and one that does not parse', () => {
    expect(problemsOf(`${MINIMAL}lateness: 120000\n`)).toEqual([expect.stringMatching(/^headroom\.yaml: lateness: must be a duration with a unit.*"120000ms" or "120000s"/)]);
    expect(problemsOf(`${MINIMAL}checkpoint: { interval: soon }\n`)).toEqual([expect.stringMatching(/^headroom\.yaml: checkpoint\.interval: must be a duration with a unit.*got "soon"/)]);
    expect(problemsOf(`${MINIMAL}windows: [5m, fortnight]\n`)).toEqual([expect.stringMatching(/^headroom\.yaml: windows\[1\]: must be a duration with a unit/)]);
  });

  it('a broker that is not host:port', () => {
    expect(problemsOf('kafka: { brokers: ["localhost"], topics: [t] }\n')).toEqual([expect.stringMatching(/^headroom\.yaml: kafka\.brokers\[0\]: must be host:port, e.g\. "127\.0\.0\.1:9092", got "localhost"/)]);
  });

  it('reports every problem at once, not one per restart', () => {
    const text = 'kafka: { brokers: ["h:1"], topics: [t, t], deadLetterTopic: t }\ncheckpoint: { interval: 50ms }\nmodels: [{ name: a }, { name: a }]\n';
    const lines = problemsOf(text);
    expect(lines).toHaveLength(4);
    expect(lines.every((l) => l.startsWith('headroom.yaml: '))).toBe(true);
  });
});

describe('parseConfig: cross-field checks', () => {
  it('a dead-letter topic that is also an input topic', () => {
    const lines = problemsOf('kafka: { brokers: ["h:1"], topics: [scores], outcomeTopics: [verdicts], deadLetterTopic: verdicts }\n');
    expect(lines).toEqual([expect.stringMatching(/^headroom\.yaml: kafka\.deadLetterTopic: "verdicts" is also an input topic; .*use a topic of its own/)]);
  });

  it('a topic listed as both scored events and outcomes', () => {
    expect(problemsOf('kafka: { brokers: ["h:1"], topics: [a], outcomeTopics: [a] }\n')).toEqual([expect.stringMatching(/^headroom\.yaml: kafka\.outcomeTopics\[0\]: "a" is also in kafka\.topics/)]);
  });

  it('a checkpoint store other than file or kafka; a kafka state topic that is also an input, outcome or dead-letter topic', () => {
    expect(problemsOf(`${MINIMAL}checkpoint: { store: redis }\n`)).toEqual([expect.stringMatching(/^headroom\.yaml: checkpoint\.store: must be file or kafka/)]);
    const kafka = 'kafka: { brokers: ["h:1"], topics: [scores], outcomeTopics: [verdicts], deadLetterTopic: rejected }\n';
    for (const topic of ['scores', 'verdicts', 'rejected']) {
      expect(problemsOf(`${kafka}checkpoint: { store: kafka, topic: ${topic} }\n`), topic).toEqual([
        expect.stringMatching(new RegExp(`^headroom\\.yaml: checkpoint\\.topic: "${topic}" is also a topic of kafka; checkpoints need a topic of their own`)),
      ]);
    }
    // The file store never writes the topic, so the name is not checked then.
    expect(parseConfig(`${kafka}checkpoint: { store: file, topic: scores }\n`, 'h.yaml', {}).config.checkpoint.store).toBe('file');
    expect(parseConfig(`${kafka}checkpoint: { store: kafka }\n`, 'h.yaml', {}).config.checkpoint).toMatchObject({ store: 'kafka', topic: 'headroom-state' });
  });

  it('a checkpoint interval below 100ms; 100ms itself is allowed', () => {
    expect(problemsOf(`${MINIMAL}checkpoint: { interval: 99ms }\n`)).toEqual([expect.stringMatching(/^headroom\.yaml: checkpoint\.interval: 99ms is below 100ms/)]);
    expect(parseConfig(`${MINIMAL}checkpoint: { interval: 100ms }\n`, 'h.yaml', {}).config.checkpoint.intervalMs).toBe(100);
  });

  it('windows: repeated (also under another spelling), longer than the history kept, not whole buckets', () => {
    expect(problemsOf(`${MINIMAL}windows: [5m, 300s]\n`)).toEqual([expect.stringMatching(/^headroom\.yaml: windows\[1\]: "300s" is as long as "5m"; list each window once/)]);
    expect(problemsOf(`${MINIMAL}windows: [1h, 7d]\n`)).toEqual([
      expect.stringMatching(/^headroom\.yaml: windows\[1\]: 7d is longer than the history kept \(history\.retention: 1d\); raise history\.retention to at least 7d/),
    ]);
    expect(problemsOf(`${MINIMAL}windows: [90s]\n`)).toEqual([expect.stringMatching(/^headroom\.yaml: windows\[0\]: 90s is not a whole number of buckets \(history\.bucket: 1m\)/)]);
    expect(problemsOf(`${MINIMAL}windows: [150m]\n`)).toEqual([expect.stringMatching(/windows\[0\]: 150m is not a whole number of buckets \(history\.coarseBucket: 1h\)/)]);
    // The same length with a longer retention is fine.
    expect(parseConfig(`${MINIMAL}windows: [7d]\nhistory: { retention: 7d }\n`, 'h.yaml', {}).config.windows).toEqual([{ name: '7d', durationMs: 604_800_000 }]);
  });

  it('history and lateness settings the sketch refuses, under the names of the file', () => {
    expect(problemsOf(`${MINIMAL}lateness: 3h\n`)).toEqual([expect.stringMatching(/^headroom\.yaml: lateness: must be at most history\.fineSpan - history\.bucket, got 3h/)]);
    expect(problemsOf(`${MINIMAL}history: { bucket: 7m }\n`)).toEqual([expect.stringMatching(/^headroom\.yaml: history\.fineSpan: must be a multiple of history\.bucket, got 2h/)]);
  });

  it('model names: unique, and at most one "*"', () => {
    expect(problemsOf(`${MINIMAL}models: [{ name: a }, { name: a }]\n`)).toEqual([expect.stringMatching(/^headroom\.yaml: models\[1\]\.name: "a" repeats models\[0\]\.name/)]);
    expect(problemsOf(`${MINIMAL}models: [{ name: "*" }, { name: b }, { name: "*" }]\n`)).toEqual([expect.stringMatching(/^headroom\.yaml: models\[2\]\.name: "\*" appears twice \(models\[0\]\)/)]);
  });

  it('an empty models list', () => {
    expect(problemsOf(`${MINIMAL}models: []\n`)).toEqual([expect.stringMatching(/^headroom\.yaml: models: must hold at least one model; leave models out/)]);
  });

  it('segment keys: no "=", no repeats, no more than decode.maxSegmentKeys', () => {
    expect(problemsOf(`${MINIMAL}models: [{ name: a, segmentKeys: ["a=b"] }]\n`)).toEqual([expect.stringMatching(/models\[0\]\.segmentKeys\[0\]: "a=b" cannot be a segment key/)]);
    expect(problemsOf(`${MINIMAL}models: [{ name: a, segmentKeys: [line, line] }]\n`)).toEqual([expect.stringMatching(/models\[0\]\.segmentKeys\[1\]: repeats "line"/)]);
    expect(problemsOf(`${MINIMAL}models: [{ name: a, segmentKeys: [line, site] }]\ndecode: { maxSegmentKeys: 1 }\n`)).toEqual([
      expect.stringMatching(/models\[0\]\.segmentKeys: names 2 keys but decode\.maxSegmentKeys is 1/),
    ]);
  });

  it('decode limits below their minimum', () => {
    expect(problemsOf(`${MINIMAL}decode: { maxBytes: 0 }\n`)).toEqual([expect.stringMatching(/^headroom\.yaml: decode\.maxBytes: must be at least 1, got 0/)]);
    expect(parseConfig(`${MINIMAL}decode: { maxSegmentKeys: 0 }\n`, 'h.yaml', {}).config.decode.maxSegmentKeys).toBe(0);
  });

  it('a session timeout below the broker minimum, or heartbeats too sparse for it; a third of it is allowed', () => {
    expect(problemsOf(`${MINIMAL}  sessionTimeout: 5s\n`)).toEqual([expect.stringMatching(/^headroom\.yaml: kafka\.sessionTimeout: 5s is below 6s, the broker's default group\.min\.session\.timeout\.ms/)]);
    expect(problemsOf(`${MINIMAL}  sessionTimeout: 9s\n  heartbeatInterval: 3001ms\n`)).toEqual([expect.stringMatching(/^headroom\.yaml: kafka\.heartbeatInterval: 3001ms is more than a third of kafka\.sessionTimeout \(9s\).*use at most 3s \(line 5\)$/)]);
    expect(parseConfig(`${MINIMAL}  sessionTimeout: 9s\n  heartbeatInterval: 3s\n`, 'headroom.yaml', {}).config.kafka).toMatchObject({ sessionTimeoutMs: 9_000, heartbeatIntervalMs: 3_000 });
  });

  it('alert rules: parsed with their defaults, checked against models, windows and thresholds, misspellings matched in their own section', () => {
    const rules = `models: [{ name: parcel-damage, segmentKeys: [line] }]\nalerts:\n  evaluateEvery: 30s\n  rules:\n    - { name: line-rise, kind: shareRise, model: parcel-damage, segmentKey: line, threshold: 0.25, window: 5m }\n`;
    const { config } = parseConfig(`${MINIMAL}${rules}`, 'headroom.yaml', {});
    expect(config.alerts.evaluateEveryMs).toBe(30_000);
    expect(config.alerts.rules).toEqual([expect.objectContaining({ name: 'line-rise', kind: 'shareRise', segmentKey: 'line', threshold: 0.25, window: '5m', holdMs: 300_000, minCount: 500 })]);
    expect(parseConfig(MINIMAL, 'headroom.yaml', {}).config.alerts).toEqual({ rules: [], evaluateEveryMs: 10_000, webhook: null, linkBase: null });
    expect(problemsOf(`${MINIMAL}alerts: { rules: [{ name: r, kind: shareRise, threshold: 0.3 }] }\n`)).toEqual([
      expect.stringMatching(/^headroom\.yaml: alerts\.rules\[0\]\.threshold: 0\.3 is not among the thresholds of "\*"/),
    ]);
    expect(problemsOf(`${MINIMAL}alerts: { rules: [{ name: r, kind: drift, statistic: psi, window: 2h }] }\n`)).toEqual([
      expect.stringMatching(/^headroom\.yaml: alerts\.rules\[0\]\.window: "2h" is not one of windows \(5m, 1h, 24h\)/),
    ]);
    expect(problemsOf(`${MINIMAL}alerts: { rules: [{ name: r, kind: drift, statistic: psi, windw: 1h }] }\n`)).toEqual([
      expect.stringMatching(/alerts\.rules\[0\]\.windw: is not a setting here; did you mean "window"\?/),
    ]);
  });

  it('a client certificate without its key', () => {
    expect(problemsOf(`${MINIMAL}  tls: { cert: c.pem }\n`)).toEqual([expect.stringMatching(/^headroom\.yaml: kafka\.tls\.key: is needed with kafka\.tls\.cert/)]);
  });

  it('SASL without a password anywhere names the variable to set', () => {
    expect(problemsOf(`${MINIMAL}  sasl: { mechanism: plain, username: u }\n  tls: true\n`)).toEqual([
      expect.stringMatching(/^headroom\.yaml: kafka\.sasl\.password: is not set; set HEADROOM_KAFKA_SASL_PASSWORD/),
    ]);
  });
});

describe('warnings', () => {
  it('SASL without TLS is a warning, not an error', () => {
    const { config, warnings } = parseConfig(`${MINIMAL}  sasl: { mechanism: plain, username: u }\n`, 'h.yaml', { HEADROOM_KAFKA_SASL_PASSWORD: 'pw' });
    expect(config.kafka.sasl?.mechanism).toBe('plain');
    expect(warnings).toEqual([expect.stringMatching(/^kafka\.sasl is set but kafka\.tls is not: the password crosses the network in clear text/)]);
    const withTls = parseConfig(`${MINIMAL}  sasl: { mechanism: plain, username: u }\n  tls: true\n`, 'h.yaml', { HEADROOM_KAFKA_SASL_PASSWORD: 'pw' });
    expect(withTls.warnings).toEqual([]);
  });

  it('a password written in the file, and certificate checks turned off', () => {
    const { warnings } = parseConfig(`${MINIMAL}  sasl: { mechanism: scram-sha-512, username: u, password: pw }\n  tls: { rejectUnauthorized: false }\n`, 'h.yaml', {});
    expect(warnings).toEqual([
      expect.stringMatching(/^kafka\.sasl\.password is written in h\.yaml; prefer HEADROOM_KAFKA_SASL_PASSWORD/),
      expect.stringMatching(/^kafka\.tls\.rejectUnauthorized is false/),
    ]);
  });
});

describe('secrets', () => {
  const text = `${MINIMAL}  sasl: { mechanism: scram-sha-512, username: svc-headroom }\n  tls: true\n`;
  const password = 'correct-horse-battery-staple';

  it('describeConfig never prints the password, and says where it came from', () => {
    const { config } = parseConfig(text, 'h.yaml', { HEADROOM_KAFKA_SASL_PASSWORD: password });
    const summary = describeConfig(config);
    expect(summary).not.toContain(password);
    expect(summary).toContain('password [redacted] (from HEADROOM_KAFKA_SASL_PASSWORD)');
    expect(summary).toContain('user svc-headroom');
    expect(summary).toContain('brokers 127.0.0.1:9092');
    expect(summary).toContain('windows 5m, 1h, 24h');
  });

  it('logging the config object does not reveal it either', () => {
    const { config } = parseConfig(text, 'h.yaml', { HEADROOM_KAFKA_SASL_PASSWORD: password });
    expect(JSON.stringify(config)).not.toContain(password);
    expect(inspect(config, { depth: 10 })).not.toContain(password);
    expect(`${String(config.kafka.sasl?.password)}`).toBe('[redacted]');
    expect(config.kafka.sasl?.password.reveal()).toBe(password);
  });

  it('a bad value in an error message is never the password', () => {
    const error = caught(() => parseConfig(`${MINIMAL}  sasl: { mechanism: nope, username: u }\n`, 'h.yaml', { HEADROOM_KAFKA_SASL_PASSWORD: password }));
    expect(error.message).not.toContain(password);
    expect(JSON.stringify(error.context)).not.toContain(password);
  });
});
