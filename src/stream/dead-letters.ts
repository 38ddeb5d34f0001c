/**
 * Copies of rejected messages for the dead-letter topic: the original key and bytes, with why and where
 * from in headers. Copies wait per source partition and are sent at the end of each batch; a partition
 * with copies still waiting is not checkpointed (see watcher.ts), so a crash replays and copies them
 * again: at least once, never lost.
 */
import type { KafkaMessage, Message, Producer } from 'kafkajs';
import type { Logger } from 'pino';

/** The broker refuses the request for its size: sending it again can never succeed. */
export function refusedForSize(error: unknown): boolean {
  const type = (error as { type?: unknown } | null)?.type;
  return type === 'MESSAGE_TOO_LARGE' || type === 'RECORD_LIST_TOO_LARGE';
}

export class DeadLetters {
  private readonly waiting = new Map<string, Message[]>();

  constructor(
    private readonly topic: string,
    private readonly producer: () => Producer | undefined,
    private readonly log: Logger,
  ) {}

  /** Keeps a copy of `message`, read from `topic`[`partition`], until the next flush of `key`. */
  add(key: string, topic: string, partition: number, message: KafkaMessage, reason: string, field: string): void {
    let list = this.waiting.get(key);
    if (list === undefined) {
      list = [];
      this.waiting.set(key, list);
    }
    list.push({
      key: message.key,
      value: message.value,
      headers: {
        'headroom-reason': reason,
        'headroom-field': field,
        'headroom-source-topic': topic,
        'headroom-source-partition': String(partition),
        'headroom-source-offset': message.offset,
      },
    });
  }

  pending(key: string): number {
    return this.waiting.get(key)?.length ?? 0;
  }

  /** Sends the copies waiting for `key`; on failure they stay and go with the next flush. Never throws. */
  async flush(key: string): Promise<void> {
    const list = this.waiting.get(key);
    const p = this.producer();
    if (list === undefined || list.length === 0 || p === undefined) return;
    const sending = list.length;
    try {
      await p.send({ topic: this.topic, messages: list.slice(0, sending), acks: -1 });
      list.splice(0, sending);
    } catch (error) {
      if (refusedForSize(error)) return this.sendOneByOne(p, list);
      this.log.error({ err: error, topic: this.topic, messages: sending }, 'dead-letter copies not sent; this partition waits for them before its next checkpoint');
    }
  }

  flushAll(): Promise<void[]> {
    return Promise.all([...this.waiting.keys()].map((key) => this.flush(key)));
  }

  /**
   * A copy larger than the dead-letter topic accepts would be refused forever and hold its partition's
   * checkpoint back for good; it goes without its value instead, saying so in a header, and is logged.
   */
  private async sendOneByOne(p: Producer, list: Message[]): Promise<void> {
    while (list.length > 0) {
      const copy = list[0] as Message;
      try {
        await p.send({ topic: this.topic, messages: [copy], acks: -1 });
      } catch (error) {
        if (!refusedForSize(error)) {
          this.log.error({ err: error, topic: this.topic, messages: list.length }, 'dead-letter copies not sent; this partition waits for them before its next checkpoint');
          return;
        }
        const bytes = copy.value === null || copy.value === undefined ? 0 : Buffer.byteLength(copy.value);
        this.log.error({ topic: this.topic, bytes, headers: copy.headers }, 'dead-letter copy too large for its topic; sent without its value');
        list[0] = { key: copy.key, value: null, headers: { ...copy.headers, 'headroom-value-dropped': `${bytes} bytes, more than ${this.topic} accepts (max.message.bytes)` } };
        continue;
      }
      list.shift();
    }
  }
}
