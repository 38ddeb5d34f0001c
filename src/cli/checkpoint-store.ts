/** The checkpoint store `checkpoint.store` names, for `headroom watch`. */
import { randomUUID } from 'node:crypto';
import { Kafka } from 'kafkajs';
import type { Logger } from 'pino';
import { kafkaClientOptions } from '../config/index.js';
import type { HeadroomConfig, TlsMaterial } from '../config/index.js';
import { FileCheckpointStore, KafkaCheckpointStore } from '../state/index.js';
import type { CheckpointStore } from '../state/index.js';
import { kafkaLogCreator } from '../stream/index.js';

export function checkpointStoreFor(config: HeadroomConfig, tls: TlsMaterial, logger: Logger): CheckpointStore {
  if (config.checkpoint.store === 'file') return new FileCheckpointStore({ dir: config.checkpoint.dir });
  const kafka = new Kafka({ ...kafkaClientOptions(config, tls), logCreator: kafkaLogCreator(logger.child({ component: 'kafkajs-checkpoints' })) });
  // Each watcher reads the whole state topic in a group of its own; the prefix is what an ACL grants.
  return new KafkaCheckpointStore({ kafka, topic: config.checkpoint.topic, logger, readerGroupId: `${config.kafka.groupId}.checkpoint-reader.${randomUUID()}` });
}
