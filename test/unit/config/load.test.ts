import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { kafkaClientOptions, loadConfig, modelFor, parseConfig, readTlsMaterial } from '../../../src/config/index.js';
import { exitCodeOf } from '../../../src/errors.js';
import { caughtAsync, MINIMAL } from './helpers.js';

const EXAMPLE = fileURLToPath(new URL('../../../examples/watch.yaml', import.meta.url));
const EXAMPLES_DIR = fileURLToPath(new URL('../../../examples/', import.meta.url));

let dir: string;
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'headroom-config-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

async function file(name: string, text: string): Promise<string> {
  const path = join(dir, name);
  await writeFile(path, text);
  return path;
}

describe('loadConfig', () => {
  it('the documented example validates, with no warnings', async () => {
    const { config, warnings } = await loadConfig(EXAMPLE, {});
    expect(warnings).toEqual([]);
    expect(config.kafka.topics).toEqual(['parcel-scores']);
    expect(config.kafka.deadLetterTopic).toBe('headroom-rejected');
    const damage = modelFor(config, 'parcel-damage');
    expect(damage?.segmentKeys).toEqual(['line']);
    expect(damage?.reference).toBe(join(EXAMPLES_DIR, 'references/parcel-damage@2026.11.3.json'));
    expect(modelFor(config, 'some-other-model')?.name).toBe('*');
  });

  it('the example writes out the defaults as they are: it doubles as the reference', async () => {
    const { config } = await loadConfig(EXAMPLE, {});
    const defaults = parseConfig(MINIMAL, 'defaults', {}).config;
    expect(config.windows).toEqual(defaults.windows);
    expect(config.history).toEqual(defaults.history);
    expect([config.latenessMs, config.maxFutureMs]).toEqual([defaults.latenessMs, defaults.maxFutureMs]);
    expect(config.checkpoint.intervalMs).toBe(defaults.checkpoint.intervalMs);
    expect(config.http).toEqual(defaults.http);
    expect(config.referenceReload).toEqual(defaults.referenceReload);
    expect(config.decode).toEqual(defaults.decode);
    expect(config.kafka.clientId).toBe(defaults.kafka.clientId);
    expect(config.kafka.groupId).toBe(defaults.kafka.groupId);
    expect(modelFor(config, 'parcel-damage')?.thresholds).toEqual(defaults.models[0]?.thresholds);
    expect(modelFor(config, 'parcel-damage')?.maxSeries).toBe(defaults.models[0]?.maxSeries);
  });

  it('resolves relative paths against the file, leaves absolute ones', async () => {
    const path = await file('paths.yaml', `${MINIMAL}  tls: { ca: certs/ca.pem }\nmodels: [{ name: a, reference: refs/a.json }, { name: b, reference: /abs/b.json }]\ncheckpoint: { dir: state }\n`);
    const { config } = await loadConfig(path, {});
    expect(config.models.map((m) => m.reference)).toEqual([join(dir, 'refs/a.json'), '/abs/b.json']);
    expect(config.checkpoint.dir).toBe(join(dir, 'state'));
    expect(config.kafka.tls?.ca).toBe(join(dir, 'certs/ca.pem'));
  });

  it('a missing file is HR_ERR_CONFIG_UNREADABLE with the path', async () => {
    const missing = join(dir, 'nope.yaml');
    const error = await caughtAsync(() => loadConfig(missing, {}));
    expect(error.code).toBe('HR_ERR_CONFIG_UNREADABLE');
    expect(error.message).toContain(`${missing}: no such file`);
    expect(exitCodeOf(error)).toBe(66);
  });

  it('a directory is unreadable too', async () => {
    const error = await caughtAsync(() => loadConfig(dir, {}));
    expect(error.code).toBe('HR_ERR_CONFIG_UNREADABLE');
    expect(error.message).toContain(dir);
  });

  it('a YAML syntax error is HR_ERR_CONFIG_INVALID with the file, line and column', async () => {
    const path = await file('broken.yaml', 'kafka:\n  brokers: ["a:1"\n  topics: [t]\n');
    const error = await caughtAsync(() => loadConfig(path, {}));
    expect(error.code).toBe('HR_ERR_CONFIG_INVALID');
    expect(error.message).toMatch(new RegExp(`${path.replace(/[.]/g, '\\.')}:\\d+:\\d+: YAML syntax: `));
    expect(error.context).toMatchObject({ source: path, line: expect.any(Number), column: expect.any(Number) });
  });

  it('a duplicate key is a syntax error on its line, not a silent override', async () => {
    const path = await file('dup.yaml', `${MINIMAL}http: { port: 1 }\nhttp: { port: 2 }\n`);
    const error = await caughtAsync(() => loadConfig(path, {}));
    expect(error.code).toBe('HR_ERR_CONFIG_INVALID');
    expect(error.context).toMatchObject({ line: 5 });
  });

  it('validation errors name the file path', async () => {
    const path = await file('bad.yaml', `${MINIMAL}checkpoint: { interval: 10ms }\n`);
    const error = await caughtAsync(() => loadConfig(path, {}));
    expect(error.message).toContain(`${path}: checkpoint.interval: 10ms is below 100ms`);
  });
});

describe('readTlsMaterial', () => {
  it('reads the PEM files kafkaClientOptions passes on', async () => {
    await file('ca.pem', 'THE CA');
    const path = await file('tls.yaml', `${MINIMAL}  tls: { ca: ca.pem }\n`);
    const { config } = await loadConfig(path, {});
    const material = await readTlsMaterial(config);
    expect(material).toEqual({ ca: 'THE CA' });
    expect(kafkaClientOptions(config, material).ssl).toEqual({ rejectUnauthorized: true, ca: ['THE CA'] });
  });

  it('a missing PEM file names the field and the path', async () => {
    const path = await file('tls-missing.yaml', `${MINIMAL}  tls: { cert: no-cert.pem, key: no-key.pem }\n`);
    const { config } = await loadConfig(path, {});
    const error = await caughtAsync(() => readTlsMaterial(config));
    expect(error.code).toBe('HR_ERR_CONFIG_UNREADABLE');
    expect(error.message).toMatch(/kafka\.tls\.(cert|key): .*no-(cert|key)\.pem: no such file/);
  });
});
