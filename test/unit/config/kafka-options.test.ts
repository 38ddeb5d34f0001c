import { describe, expect, it } from 'vitest';
import { kafkaClientOptions, parseConfig } from '../../../src/config/index.js';
import { caught, MINIMAL } from './helpers.js';

const config = (extra: string, env: Record<string, string> = {}) => parseConfig(`${MINIMAL}${extra}`, 'h.yaml', env).config;

describe('kafkaClientOptions', () => {
  it('no TLS, no SASL: client id and brokers only', () => {
    expect(kafkaClientOptions(config(''))).toEqual({ clientId: 'headroom', brokers: ['127.0.0.1:9092'] });
  });

  it('SASL plain over `tls: true`', () => {
    const options = kafkaClientOptions(config('  tls: true\n  sasl: { mechanism: plain, username: svc }\n', { HEADROOM_KAFKA_SASL_PASSWORD: 'pw' }));
    expect(options).toEqual({ clientId: 'headroom', brokers: ['127.0.0.1:9092'], ssl: true, sasl: { mechanism: 'plain', username: 'svc', password: 'pw' } });
  });

  it('SCRAM-SHA-256 and SCRAM-SHA-512', () => {
    for (const mechanism of ['scram-sha-256', 'scram-sha-512'] as const) {
      const options = kafkaClientOptions(config(`  tls: true\n  sasl: { mechanism: ${mechanism}, username: svc }\n`, { HEADROOM_KAFKA_SASL_PASSWORD: 's3cret' }));
      expect(options.sasl).toEqual({ mechanism, username: 'svc', password: 's3cret' });
    }
  });

  it('TLS with a CA, a client certificate and key, and a server name: the file contents go to kafkajs', () => {
    const c = config('  tls: { ca: ca.pem, cert: me.pem, key: me-key.pem, servername: kafka.internal }\n');
    const options = kafkaClientOptions(c, { ca: 'CA PEM', cert: 'CERT PEM', key: 'KEY PEM' });
    expect(options.ssl).toEqual({ rejectUnauthorized: true, ca: ['CA PEM'], cert: 'CERT PEM', key: 'KEY PEM', servername: 'kafka.internal' });
  });

  it('TLS with certificate checks off keeps that setting', () => {
    expect(kafkaClientOptions(config('  tls: { rejectUnauthorized: false }\n')).ssl).toEqual({ rejectUnauthorized: false });
  });

  it('refuses to connect with defaults when a configured TLS file was not read', () => {
    const error = caught(() => kafkaClientOptions(config('  tls: { ca: ca.pem }\n')));
    expect(error.code).toBe('HR_ERR_CONFIG_UNREADABLE');
    expect(error.message).toContain('kafka.tls.ca: ca.pem was not read');
  });
});
