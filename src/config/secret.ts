/**
 * A password that cannot leak by accident: logging the config, JSON.stringify, template strings and
 * util.inspect all print `[redacted]`. Only `reveal()` gives the text, and only kafkaClientOptions calls it.
 */
const REDACTED = '[redacted]';

export class Secret {
  readonly #value: string;
  /** Where the value came from, for describeConfig: `file` or the environment variable's name. */
  readonly origin: string;

  constructor(value: string, origin: string) {
    this.#value = value;
    this.origin = origin;
  }

  reveal(): string {
    return this.#value;
  }

  toString(): string {
    return REDACTED;
  }

  toJSON(): string {
    return REDACTED;
  }

  [Symbol.for('nodejs.util.inspect.custom')](): string {
    return `Secret(${REDACTED})`;
  }
}
