import { describe, expect, it } from 'vitest';
import { applyEnvOverrides, parseConfig } from '../../../src/config/index.js';
import { MINIMAL, problemsOf } from './helpers.js';

describe('environment overrides', () => {
  it('HEADROOM_KAFKA_BROKERS replaces the file brokers, split on commas with spaces trimmed', () => {
    const { config } = parseConfig(MINIMAL, 'h.yaml', { HEADROOM_KAFKA_BROKERS: 'b1:9092, b2:9092,,' });
    expect(config.kafka.brokers).toEqual(['b1:9092', 'b2:9092']);
  });

  it('supplies brokers the file leaves out', () => {
    const { config } = parseConfig('kafka: { topics: [t] }\n', 'h.yaml', { HEADROOM_KAFKA_BROKERS: 'b1:9092' });
    expect(config.kafka.brokers).toEqual(['b1:9092']);
  });

  it('HEADROOM_HTTP_PORT wins over the file', () => {
    expect(parseConfig(`${MINIMAL}http: { port: 9000 }\n`, 'h.yaml', { HEADROOM_HTTP_PORT: '9100' }).config.http.port).toBe(9100);
    expect(parseConfig(`${MINIMAL}http: { port: 9000 }\n`, 'h.yaml', {}).config.http.port).toBe(9000);
  });

  it('SASL username and password from the environment win over the file', () => {
    const text = `${MINIMAL}  tls: true\n  sasl: { mechanism: plain, username: from-file, password: file-pw }\n`;
    const { config, warnings } = parseConfig(text, 'h.yaml', { HEADROOM_KAFKA_SASL_USERNAME: 'from-env', HEADROOM_KAFKA_SASL_PASSWORD: 'env-pw' });
    expect(config.kafka.sasl?.username).toBe('from-env');
    expect(config.kafka.sasl?.password.reveal()).toBe('env-pw');
    expect(config.kafka.sasl?.password.origin).toBe('HEADROOM_KAFKA_SASL_PASSWORD');
    // The file's password was overridden, so there is nothing to warn about.
    expect(warnings).toEqual([]);
  });

  it('an empty variable counts as unset', () => {
    expect(parseConfig(`${MINIMAL}http: { port: 9000 }\n`, 'h.yaml', { HEADROOM_HTTP_PORT: '' }).config.http.port).toBe(9000);
  });

  it('does not change the document it was given', () => {
    const doc = { kafka: { brokers: ['a:1'], topics: ['t'] } };
    const { document } = applyEnvOverrides(doc, { HEADROOM_KAFKA_BROKERS: 'b:2' });
    expect(doc.kafka.brokers).toEqual(['a:1']);
    expect((document as typeof doc).kafka.brokers).toEqual(['b:2']);
  });

  it('a password with no sasl section is ignored with a warning', () => {
    const { config, warnings } = parseConfig(MINIMAL, 'h.yaml', { HEADROOM_KAFKA_SASL_PASSWORD: 'pw' });
    expect(config.kafka.sasl).toBeNull();
    expect(warnings).toEqual([expect.stringMatching(/^HEADROOM_KAFKA_SASL_PASSWORD is set but kafka\.sasl is not configured/)]);
  });
});

describe('errors in overrides name the variable', () => {
  it('a port that is not a number', () => {
    expect(problemsOf(MINIMAL, { HEADROOM_HTTP_PORT: 'http' })).toEqual(['HEADROOM_HTTP_PORT (overrides http.port of headroom.yaml): must be a whole number in [0, 65535], got "http"']);
  });

  it('a port out of range, caught by the same check as the file', () => {
    expect(problemsOf(MINIMAL, { HEADROOM_HTTP_PORT: '70000' })).toEqual(['HEADROOM_HTTP_PORT (overrides http.port of headroom.yaml): must be at most 65535, got 70000']);
  });

  it('a broker list with no broker, and a broker that is not host:port', () => {
    expect(problemsOf(MINIMAL, { HEADROOM_KAFKA_BROKERS: ' , ' })).toEqual([expect.stringMatching(/^HEADROOM_KAFKA_BROKERS \(overrides kafka\.brokers of headroom\.yaml\): holds no broker/)]);
    expect(problemsOf(MINIMAL, { HEADROOM_KAFKA_BROKERS: 'b1:9092,b2' })).toEqual([
      expect.stringMatching(/^HEADROOM_KAFKA_BROKERS \(overrides kafka\.brokers\[1\] of headroom\.yaml\): must be host:port.*got "b2"/),
    ]);
  });

  it('a username with no mechanism in the file names the missing field', () => {
    expect(problemsOf(MINIMAL, { HEADROOM_KAFKA_SASL_USERNAME: 'svc', HEADROOM_KAFKA_SASL_PASSWORD: 'pw' })).toEqual([
      expect.stringMatching(/^headroom\.yaml: kafka\.sasl\.mechanism: is required; it must be one of plain, scram-sha-256, scram-sha-512/),
    ]);
  });
});
