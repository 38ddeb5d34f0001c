/** The local broker's server.properties and StorageTool arguments, with and without the SCRAM listener. */
import { describe, expect, it } from 'vitest';
import { formatArgs, serverProperties } from '../../kafka/broker-config.js';

const parse = (text: string): Map<string, string> =>
  new Map(text.trim().split('\n').map((line) => [line.slice(0, line.indexOf('=')), line.slice(line.indexOf('=') + 1)]));

describe('local broker configuration', () => {
  it('without SCRAM: one plain listener and no SASL key', () => {
    const props = parse(serverProperties('/d', { broker: 1001, controller: 1002 }, {}));
    expect(props.get('listeners')).toBe('PLAINTEXT://127.0.0.1:1001,CONTROLLER://127.0.0.1:1002');
    expect(props.get('advertised.listeners')).toBe('PLAINTEXT://127.0.0.1:1001');
    expect([...props.keys()].filter((k) => k.includes('sasl'))).toEqual([]);
  });

  it('with SCRAM: a SASL_PLAINTEXT listener taking SCRAM-SHA-512 only; replication stays plain', () => {
    const props = parse(serverProperties('/d', { broker: 1001, controller: 1002, sasl: 1003 }, {}));
    expect(props.get('listeners')).toBe('PLAINTEXT://127.0.0.1:1001,SASL_PLAINTEXT://127.0.0.1:1003,CONTROLLER://127.0.0.1:1002');
    expect(props.get('advertised.listeners')).toBe('PLAINTEXT://127.0.0.1:1001,SASL_PLAINTEXT://127.0.0.1:1003');
    expect(props.get('listener.security.protocol.map')).toBe('PLAINTEXT:PLAINTEXT,CONTROLLER:PLAINTEXT,SASL_PLAINTEXT:SASL_PLAINTEXT');
    expect(props.get('inter.broker.listener.name')).toBe('PLAINTEXT');
    expect(props.get('listener.name.sasl_plaintext.sasl.enabled.mechanisms')).toBe('SCRAM-SHA-512');
    expect(props.get('listener.name.sasl_plaintext.scram-sha-512.sasl.jaas.config')).toBe('org.apache.kafka.common.security.scram.ScramLoginModule required;');
  });

  it('formats with the SCRAM user, and refuses credentials StorageTool would split, without echoing them', () => {
    const args = formatArgs('/d/server.properties', { username: 'svc', password: 'pw-1' });
    expect(args.slice(-2)).toEqual(['--add-scram', 'SCRAM-SHA-512=[name=svc,password=pw-1]']);
    expect(formatArgs('/d/server.properties', undefined)).not.toContain('--add-scram');
    let message = '';
    try {
      formatArgs('/p', { username: 'svc', password: 'a,b]c' });
    } catch (error) {
      message = error instanceof Error ? error.message : String(error);
    }
    expect(message).toMatch(/^scram\.password: /);
    expect(message).not.toContain('a,b]c');
  });
});
