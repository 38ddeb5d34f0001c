/**
 * docker-compose.yml cannot run here (no Docker engine): what can be checked is that it parses, that every
 * host path it mounts exists, that its watcher's config validates, and that the config and reference the
 * watcher uses are the demo's own.
 */
import { existsSync, readFileSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { parse } from 'yaml';
import { loadConfig, parseConfig } from '../../../src/config/index.js';
import { demoConfigDocument, demoReferenceText } from '../../../src/demo/index.js';

const ROOT = fileURLToPath(new URL('../../../', import.meta.url));

interface Service {
  image?: string;
  command?: string[];
  volumes?: string[];
}

const compose = parse(readFileSync(join(ROOT, 'docker-compose.yml'), 'utf8')) as { services: Record<string, Service>; volumes?: Record<string, unknown> };

describe('docker-compose.yml', () => {
  it('has the five services', () => {
    expect(Object.keys(compose.services).sort()).toEqual(['grafana', 'kafka', 'producer', 'prometheus', 'watcher']);
    expect(compose.services.kafka?.image).toMatch(/^apache\/kafka:/);
  });

  it('mounts only host paths that exist (named volumes aside)', () => {
    const mounts = Object.values(compose.services).flatMap((s) => s.volumes ?? []);
    expect(mounts.length).toBeGreaterThan(5);
    for (const mount of mounts) {
      const host = mount.split(':')[0] as string;
      if (!host.startsWith('.') && !host.startsWith('/')) {
        expect(compose.volumes ?? {}, `named volume ${host}`).toHaveProperty(host);
        continue;
      }
      expect(existsSync(resolve(ROOT, host)), `${mount}: ${host} exists`).toBe(true);
    }
  });

  it("runs the watcher on a config that validates, with the demo's own settings and reference", async () => {
    const watcher = compose.services.watcher as Service;
    expect(watcher.command).toEqual(['node', 'dist/cli/main.js', 'watch', '--config', '/etc/headroom/watch.yaml']);
    const { config } = await loadConfig(join(ROOT, 'examples/compose/watch.yaml'), {});
    expect(config.kafka.topics).toEqual(['parcel-scores']);
    expect(config.alerts.rules.map((r) => r.name)).toEqual(['line-low-margin-rise', 'line-early-warning']);
    // Equal to what `headroom demo` builds at speed 1 for the same brokers, topic, group, host, port and paths.
    const own = parseConfig(
      demoConfigDocument({ brokers: ['kafka:9092'], topic: 'parcel-scores', groupId: 'headroom-compose', host: '0.0.0.0', port: 9464, checkpointDir: '/var/lib/headroom', referencePath: config.models[0]?.reference ?? null, speed: 1 }),
      'demo',
    ).config;
    expect({ ...config, source: '' }).toEqual({ ...own, source: '' });
    // The producer sends the scenario of seed 1 to the watcher's topic.
    expect(compose.services.producer?.command).toEqual(['node', 'dist/cli/main.js', 'demo', '--kafka', 'kafka:9092', '--topic', 'parcel-scores', '--produce-only']);
  });

  it("ships the reference `headroom demo --write-reference` makes for seed 1", () => {
    const shipped = readFileSync(join(ROOT, 'examples/compose/references/parcel-damage@2026.11.3.json'), 'utf8');
    expect(shipped).toBe(demoReferenceText(1));
  });

  it('mounts the Prometheus rules and the Grafana dashboards from dashboards/', () => {
    const mounts = Object.values(compose.services).flatMap((s) => s.volumes ?? []);
    expect(mounts).toContain('./dashboards/headroom-rules.yml:/etc/prometheus/rules/headroom-rules.yml:ro');
    const prometheus = parse(readFileSync(join(ROOT, 'examples/compose/prometheus/prometheus.yml'), 'utf8')) as { rule_files: string[] };
    expect(prometheus.rule_files).toEqual(['/etc/prometheus/rules/headroom-rules.yml']);
    const provider = parse(readFileSync(join(ROOT, 'examples/compose/grafana/provisioning/dashboards/headroom.yml'), 'utf8')) as { providers: { options: { path: string } }[] };
    expect(mounts).toContain(`./dashboards:${provider.providers[0]?.options.path}:ro`);
  });
});
