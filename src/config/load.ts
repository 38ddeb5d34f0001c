/**
 * The edge around parseConfig: reads the file, resolves the paths it names against its directory (so
 * `headroom watch --config /etc/headroom/watch.yaml` works from any working directory), and reads the
 * TLS files kafkaClientOptions needs, naming the field when one is missing.
 */
import { readFile } from 'node:fs/promises';
import { dirname, resolve } from 'node:path';
import { HeadroomError } from '../errors.js';
import type { Env } from './env.js';
import type { TlsMaterial } from './kafka-options.js';
import { parseConfig } from './parse.js';
import type { ConfigResult, HeadroomConfig } from './types.js';

function unreadable(path: string, field: string | undefined, error: unknown): HeadroomError {
  const reason = (error as NodeJS.ErrnoException).code === 'ENOENT' ? 'no such file' : (error as Error).message;
  const what = field === undefined ? path : `${field}: ${path}`;
  return new HeadroomError('HR_ERR_CONFIG_UNREADABLE', `${what}: ${reason}`, { cause: error, context: field === undefined ? { path } : { path, field } });
}

/** Every path in the file, made absolute against `baseDir` (absolute paths stay as they are). */
export function resolveConfigPaths(config: HeadroomConfig, baseDir: string): HeadroomConfig {
  const at = (p: string | null): string | null => (p === null ? null : resolve(baseDir, p));
  const tls = config.kafka.tls;
  return {
    ...config,
    kafka: { ...config.kafka, tls: tls === null ? null : { ...tls, ca: at(tls.ca), cert: at(tls.cert), key: at(tls.key) } },
    models: config.models.map((m) => ({ ...m, reference: at(m.reference) })),
    checkpoint: { ...config.checkpoint, dir: resolve(baseDir, config.checkpoint.dir) },
  };
}

export async function loadConfig(path: string, env: Env): Promise<ConfigResult> {
  let text: string;
  try {
    text = await readFile(path, 'utf8');
  } catch (error) {
    throw unreadable(path, undefined, error);
  }
  const { config, warnings } = parseConfig(text, path, env);
  return { config: resolveConfigPaths(config, dirname(resolve(path))), warnings };
}

/** Reads the PEM files of kafka.tls; call after loadConfig, whose paths are absolute. */
export async function readTlsMaterial(config: HeadroomConfig): Promise<TlsMaterial> {
  const tls = config.kafka.tls;
  if (tls === null) return {};
  const read = async (field: string, path: string | null): Promise<string | undefined> => {
    if (path === null) return undefined;
    try {
      return await readFile(path, 'utf8');
    } catch (error) {
      throw unreadable(path, field, error);
    }
  };
  const [ca, cert, key] = await Promise.all([read('kafka.tls.ca', tls.ca), read('kafka.tls.cert', tls.cert), read('kafka.tls.key', tls.key)]);
  return { ...(ca === undefined ? {} : { ca }), ...(cert === undefined ? {} : { cert }), ...(key === undefined ? {} : { key }) };
}
