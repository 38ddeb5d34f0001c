/**
 * With no KAFKA_BROKERS, no Docker engine and no java/mvn on PATH, the harness must fail with one message
 * naming all three ways to give the tests a broker (not hang, not skip).
 */
import { spawnSync } from 'node:child_process';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';

const root = join(dirname(fileURLToPath(import.meta.url)), '..', '..', '..');

describe('broker acquisition without any way to get one', () => {
  it('fails with HR_ERR_HARNESS_KAFKA_UNAVAILABLE naming KAFKA_BROKERS, Docker and java/mvn', () => {
    const script = `
      import { acquireBroker } from './test/harness/kafka-source.ts';
      acquireBroker(() => {}).then(
        () => { console.log('UNEXPECTED: got a broker'); process.exit(3); },
        (e) => { console.log(JSON.stringify({ code: e.code, message: e.message })); process.exit(0); });`;
    const result = spawnSync(process.execPath, ['--import', 'tsx', '--input-type=module', '-e', script], {
      cwd: root,
      encoding: 'utf8',
      // node itself is called by absolute path; PATH holds only a folder with no java, mvn or docker.
      env: { PATH: '/nonexistent', HOME: process.env.HOME ?? '/tmp' },
      timeout: 60_000,
    });
    expect(result.status, result.stderr).toBe(0);
    const outcome = JSON.parse(result.stdout.trim().split('\n').pop() ?? '{}') as { code: string; message: string };
    expect(outcome.code).toBe('HR_ERR_HARNESS_KAFKA_UNAVAILABLE');
    expect(outcome.message).toContain('KAFKA_BROKERS');
    expect(outcome.message).toContain('Docker');
    expect(outcome.message).toMatch(/java >= 17 and mvn/);
    expect(outcome.message).toContain('java is not on PATH');
  });
});
