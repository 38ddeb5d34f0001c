/**
 * The kafkajs `Kafka` constructor options for a validated config. Pure: the TLS files are read by
 * readTlsMaterial at the edge and passed in, so this is tested without files or a broker.
 */
import type { KafkaConfig as KafkajsConfig } from 'kafkajs';
import { HeadroomError } from '../errors.js';
import type { HeadroomConfig } from './types.js';

/** PEM contents of kafka.tls.ca / cert / key. */
export interface TlsMaterial {
  readonly ca?: string | Buffer;
  readonly cert?: string | Buffer;
  readonly key?: string | Buffer;
}

export function kafkaClientOptions(config: HeadroomConfig, material: TlsMaterial = {}): KafkajsConfig {
  const k = config.kafka;
  const options: KafkajsConfig = { clientId: k.clientId, brokers: [...k.brokers] };
  if (k.tls !== null) {
    const tls = k.tls;
    const file = (field: 'ca' | 'cert' | 'key'): string | Buffer | undefined => {
      if (tls[field] === null) return undefined;
      const content = material[field];
      // A configured file silently left out would connect with Node's defaults instead: refuse.
      if (content === undefined) {
        throw new HeadroomError('HR_ERR_CONFIG_UNREADABLE', `kafka.tls.${field}: ${tls[field]} was not read; pass readTlsMaterial(config) to kafkaClientOptions`, {
          context: { field: `kafka.tls.${field}`, path: tls[field] },
        });
      }
      return content;
    };
    const ca = file('ca');
    const cert = file('cert');
    const key = file('key');
    const plain = ca === undefined && cert === undefined && key === undefined && tls.rejectUnauthorized && tls.servername === null;
    options.ssl = plain
      ? true
      : {
          rejectUnauthorized: tls.rejectUnauthorized,
          ...(ca === undefined ? {} : { ca: [ca] }),
          ...(cert === undefined ? {} : { cert }),
          ...(key === undefined ? {} : { key }),
          ...(tls.servername === null ? {} : { servername: tls.servername }),
        };
  }
  if (k.sasl !== null) {
    options.sasl = { mechanism: k.sasl.mechanism, username: k.sasl.username, password: k.sasl.password.reveal() } as KafkajsConfig['sasl'];
  }
  return options;
}
