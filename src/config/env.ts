/**
 * Environment overrides, applied to the raw document before validation so a bad value is reported once,
 * by the same checks as the file, under the variable's name. Secrets and per-deployment addresses come
 * from the environment so one file serves every environment and holds no password.
 */
import type { Problem } from './problems.js';

export type Env = Readonly<Record<string, string | undefined>>;

export const ENV_VARIABLES = {
  brokers: 'HEADROOM_KAFKA_BROKERS',
  saslUsername: 'HEADROOM_KAFKA_SASL_USERNAME',
  saslPassword: 'HEADROOM_KAFKA_SASL_PASSWORD',
  httpPort: 'HEADROOM_HTTP_PORT',
  /** Read when the webhook notifier is made (src/notify), never put into the config. */
  alertWebhookToken: 'HEADROOM_ALERT_WEBHOOK_TOKEN',
} as const;

export interface Override {
  /** Dotted field path the variable set, e.g. `kafka.brokers`. */
  readonly field: string;
  readonly variable: string;
}

export interface Overridden {
  readonly document: unknown;
  readonly overrides: readonly Override[];
  readonly problems: readonly Problem[];
  readonly warnings: readonly string[];
}

type Doc = Record<string, unknown>;

function isObject(value: unknown): value is Doc {
  return typeof value === 'object' && value !== null && !Array.isArray(value);
}

/** The child object at `key`, created when absent; undefined when something else is there (the schema will say so). */
function child(parent: Doc, key: string): Doc | undefined {
  const value = parent[key];
  if (value === undefined || value === null) {
    const created: Doc = {};
    parent[key] = created;
    return created;
  }
  return isObject(value) ? value : undefined;
}

const WHOLE = /^\d+$/;

export function applyEnvOverrides(raw: unknown, env: Env): Overridden {
  const overrides: Override[] = [];
  const problems: Problem[] = [];
  const warnings: string[] = [];
  const given = (name: string): string | undefined => {
    const value = env[name];
    return value === undefined || value === '' ? undefined : value;
  };
  const brokers = given(ENV_VARIABLES.brokers);
  const username = given(ENV_VARIABLES.saslUsername);
  const password = given(ENV_VARIABLES.saslPassword);
  const port = given(ENV_VARIABLES.httpPort);
  if (brokers === undefined && username === undefined && password === undefined && port === undefined) {
    return { document: raw, overrides, problems, warnings };
  }
  // An empty file with every setting in the environment is fine; a file that is not a mapping is the schema's to report.
  if (raw !== undefined && raw !== null && !isObject(raw)) return { document: raw, overrides, problems, warnings };
  const doc: Doc = structuredClone(raw ?? {}) as Doc;

  if (brokers !== undefined) {
    const list = brokers.split(',').map((b) => b.trim()).filter((b) => b !== '');
    const kafka = child(doc, 'kafka');
    if (list.length === 0) {
      problems.push({ field: 'kafka.brokers', variable: ENV_VARIABLES.brokers, detail: `holds no broker, got ${JSON.stringify(brokers)}; give host:port[,host:port...]` });
    } else if (kafka !== undefined) {
      kafka.brokers = list;
      overrides.push({ field: 'kafka.brokers', variable: ENV_VARIABLES.brokers });
    }
  }

  if (username !== undefined || password !== undefined) {
    const kafka = child(doc, 'kafka');
    const fileHasSasl = kafka !== undefined && isObject(kafka.sasl);
    if (!fileHasSasl && username === undefined) {
      warnings.push(`${ENV_VARIABLES.saslPassword} is set but kafka.sasl is not configured, so it is ignored; add kafka.sasl { mechanism, username } to authenticate`);
    } else if (kafka !== undefined) {
      const sasl = child(kafka, 'sasl');
      if (sasl !== undefined) {
        if (username !== undefined) {
          sasl.username = username;
          overrides.push({ field: 'kafka.sasl.username', variable: ENV_VARIABLES.saslUsername });
        }
        if (password !== undefined) {
          sasl.password = password;
          overrides.push({ field: 'kafka.sasl.password', variable: ENV_VARIABLES.saslPassword });
        }
      }
    }
  }

  if (port !== undefined) {
    const http = child(doc, 'http');
    if (!WHOLE.test(port.trim())) {
      problems.push({ field: 'http.port', variable: ENV_VARIABLES.httpPort, detail: `must be a whole number in [0, 65535], got ${JSON.stringify(port)}` });
    } else if (http !== undefined) {
      http.port = Number(port.trim());
      overrides.push({ field: 'http.port', variable: ENV_VARIABLES.httpPort });
    }
  }
  return { document: doc, overrides, problems, warnings };
}

/** The variable that set `field` or a field inside it, if any. */
export function overrideFor(field: string, overrides: readonly Override[]): Override | undefined {
  return overrides.find((o) => field === o.field || field.startsWith(`${o.field}[`) || field.startsWith(`${o.field}.`));
}
