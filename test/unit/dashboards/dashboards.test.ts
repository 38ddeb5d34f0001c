/**
 * The Grafana dashboards in dashboards/: the committed JSON is what dashboards/generate.ts writes, and each
 * dashboard holds together (datasource variable everywhere, known variables only, a sound grid). Whether the
 * queries run is for test/integration/dashboards-prometheus.test.ts, against a real Prometheus.
 */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { renderDashboards, SCHEMA_VERSION } from '../../../dashboards/generate.js';
import { DASHBOARDS_DIR, dashboardFiles, panelQueries, readDashboard, templateVariables } from '../../harness/dashboard-queries.js';

type Json = Record<string, unknown>;

const GRAFANA_GLOBALS = new Set(['__rate_interval', '__interval', '__range', '__data']);

function panels(d: Json): Json[] {
  return ((d.panels as Json[] | undefined) ?? []).flatMap((p) => [p, ...panels(p)]);
}

describe('Grafana dashboards', () => {
  const rendered = renderDashboards();

  it('the committed JSON files are the ones generate.ts writes (run `npm run dashboards` after editing it)', () => {
    expect(dashboardFiles()).toEqual([...rendered.keys()].sort());
    for (const [name, contents] of rendered) expect(readFileSync(join(DASHBOARDS_DIR, name), 'utf8'), name).toBe(contents);
  });

  it('an overview and a per-model dashboard, each with a Prometheus datasource variable', () => {
    expect(readDashboard('headroom-overview.json').uid).toBe('headroom-overview');
    const names = (file: string): string[] => templateVariables(file).map((v) => v.name);
    expect(names('headroom-model.json')).toEqual(expect.arrayContaining(['datasource', 'model', 'version', 'segment']));
    expect(names('headroom-overview.json')).toEqual(expect.arrayContaining(['datasource', 'model']));
    for (const file of dashboardFiles()) {
      const ds = templateVariables(file).find((v) => v.name === 'datasource');
      expect(ds, file).toMatchObject({ type: 'datasource', query: 'prometheus' });
      expect(readDashboard(file).schemaVersion, file).toBe(SCHEMA_VERSION);
    }
    expect(SCHEMA_VERSION).toBeGreaterThanOrEqual(36); // the first schema of Grafana 9/10 with datasource refs by uid
  });

  for (const file of dashboardFiles()) {
    describe(file, () => {
      const dashboard = readDashboard(file);
      const all = panels(dashboard);
      const content = all.filter((p) => p.type !== 'row');
      const variables = new Set(templateVariables(file).map((v) => v.name));

      it('every panel, target and query variable reads the datasource variable', () => {
        expect(content.length).toBeGreaterThan(5);
        for (const p of content) {
          expect(p.datasource, String(p.title)).toEqual({ type: 'prometheus', uid: '${datasource}' });
          const targets = p.targets as Json[];
          expect(targets.length, String(p.title)).toBeGreaterThan(0);
          for (const t of targets) expect(t.datasource, `${String(p.title)} ${String(t.refId)}`).toEqual({ type: 'prometheus', uid: '${datasource}' });
        }
        for (const v of (dashboard.templating as { list: Json[] }).list) if (v.type === 'query') expect(v.datasource, String(v.name)).toEqual({ type: 'prometheus', uid: '${datasource}' });
      });

      it('queries use only the dashboard’s own variables and Grafana’s interval variables', () => {
        for (const q of panelQueries(file)) {
          for (const m of q.expr.matchAll(/\$\{?([a-zA-Z_][a-zA-Z0-9_]*)/g)) {
            const name = m[1] as string;
            expect(variables.has(name) || GRAFANA_GLOBALS.has(name), `${q.where}: $${name}`).toBe(true);
          }
        }
      });

      it('panel ids and titles are unique and the grid stays within 24 columns without overlaps', () => {
        const ids = all.map((p) => p.id);
        expect(new Set(ids).size).toBe(ids.length);
        const titles = content.map((p) => p.title);
        expect(new Set(titles).size).toBe(titles.length);
        const cells = new Set<string>();
        for (const p of all) {
          const g = p.gridPos as { x: number; y: number; w: number; h: number };
          expect(g.x + g.w, String(p.title)).toBeLessThanOrEqual(24);
          for (let x = g.x; x < g.x + g.w; x++) {
            for (let y = g.y; y < g.y + g.h; y++) {
              const cell = `${x},${y}`;
              expect(cells.has(cell), `${String(p.title)} overlaps at ${cell}`).toBe(false);
              cells.add(cell);
            }
          }
        }
      });

      it('table panels label every query column they merge', () => {
        for (const p of content.filter((q) => q.type === 'table')) {
          const organize = (p.transformations as Json[]).find((t) => t.id === 'organize') as { options: { renameByName: Record<string, string> } } | undefined;
          const refIds = (p.targets as Json[]).map((t) => `Value #${String(t.refId)}`);
          expect(Object.keys(organize?.options.renameByName ?? {}).sort(), String(p.title)).toEqual(refIds.sort());
        }
      });
    });
  }
});
