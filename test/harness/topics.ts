/** Reading what landed on a topic, for tests that check the dead-letter copies byte for byte. */
import type { Kafka, KafkaMessage } from 'kafkajs';
import { uniqueName } from './names.js';
import { sleep, until } from './wait.js';

export interface ReadMessage {
  /** The value's bytes as base64, or null for a message without a value. */
  readonly value: string | null;
  readonly headers: Readonly<Record<string, string>>;
}

function headersOf(message: KafkaMessage): Record<string, string> {
  const out: Record<string, string> = {};
  for (const [name, value] of Object.entries(message.headers ?? {})) out[name] = value === undefined ? '' : String(value);
  return out;
}

/**
 * Reads `topic` from the beginning with a fresh group until `expected` messages have arrived, then waits
 * `settleMs` more so that a copy too many would show up too.
 */
export async function readTopic(kafka: Kafka, topic: string, expected: number, timeoutMs = 60_000, settleMs = 1_000): Promise<ReadMessage[]> {
  const out: ReadMessage[] = [];
  const reader = kafka.consumer({ groupId: uniqueName('topic-reader'), maxBytesPerPartition: 4 * 1024 * 1024 });
  await reader.connect();
  try {
    await reader.subscribe({ topics: [topic], fromBeginning: true });
    await reader.run({
      eachMessage: async ({ message }) => {
        out.push({ value: message.value === null ? null : message.value.toString('base64'), headers: headersOf(message) });
      },
    });
    await until(`${expected} messages on ${topic} (have ${out.length})`, () => out.length >= expected, timeoutMs);
    await sleep(settleMs);
  } finally {
    await reader.disconnect();
  }
  return out;
}
