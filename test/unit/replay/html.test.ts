/**
 * report.html as text: the report's JSON block parses back to the report, names that try to end the
 * script stay inert, nothing points outside the file, and the inlined library keeps its licence.
 */
import { describe, expect, it } from 'vitest';
import { CAUTIONS, loadChartLibrary, REPORT_FORMAT, reportHtml, scriptSafeJson } from '../../../src/replay/index.js';
import type { ChartLibrary, ReplayReport, ReportEntry } from '../../../src/replay/index.js';
import { PAGE_SCRIPT } from '../../../src/replay/html-script.js';
import { caught } from '../caught.js';

const HOSTILE_MODEL = '</script><script>alert(1)</script>';
const HOSTILE_SEGMENT = 'line=</SCRIPT ><!--<script>&amp;\u2028';

function entry(model: string, segment: string): ReportEntry {
  return {
    start: '2026-12-01T00:00:00.000Z',
    end: '2026-12-01T01:00:00.000Z',
    model,
    version: 'v1',
    segment,
    count: 10,
    late: 0,
    future: 0,
    reference: 'none',
    lowMargin: [{ threshold: 0.25, live: 0.3, reference: null, interval: [0.1, 0.6] }],
    ks: null,
    psi: null,
    wasserstein: null,
    quantiles: { '0.5': 0.4 },
    labels: null,
    alerts: [],
  };
}

const report: ReplayReport = {
  format: REPORT_FORMAT,
  createdAt: '2026-12-02T00:00:00.000Z',
  source: '1 file: </script>.jsonl',
  window: '1h',
  totals: { lines: 20, events: 20, rejected: {}, afterClose: 0, unwatched: 0, skipped: [] },
  windows: [entry(HOSTILE_MODEL, 'all'), entry('parcel-damage', HOSTILE_SEGMENT)],
  cdfs: {
    margins: [0, 0.5, 1],
    series: [{ model: HOSTILE_MODEL, version: 'v1', segment: 'all', reference: null, windows: [{ start: '2026-12-01T00:00:00.000Z', end: '2026-12-01T01:00:00.000Z', picked: ['first', 'last'], count: 10, ks: null, cdf: [0, 0.6, 1] }] }],
  },
};

describe('report.html', async () => {
  const library = await loadChartLibrary();
  const html = reportHtml(report, library);

  it('has exactly its own three scripts: hostile names open and close none', () => {
    expect(html.match(/<script/gi)).toHaveLength(3);
    expect(html.match(/<\/script/gi)).toHaveLength(3);
    expect(html).not.toMatch(/<!--/);
  });

  it('carries the report as JSON that parses back to it', () => {
    const block = /<script type="application\/json" id="report-data">([\s\S]*?)<\/script>/.exec(html)?.[1];
    expect(block).toBeDefined();
    expect(JSON.parse(block as string)).toEqual(report);
    expect(block).not.toMatch(/[<>&\u2028\u2029]/);
  });

  it('names nothing outside the file: no http(s) URL, no src or href but data:, a policy that forbids fetching', () => {
    expect(html).not.toMatch(/https?:\/\//i);
    for (const m of html.matchAll(/\b(?:src|href)\s*=\s*"([^"]*)"/gi)) expect(m[1]).toMatch(/^data:/);
    expect(html).not.toMatch(/@import|url\(\s*['"]?(?!data:)/i);
    expect(html).toContain(`content="default-src 'none'; script-src 'unsafe-inline'; style-src 'unsafe-inline'; img-src data:"`);
  });

  it('inlines uPlot with its MIT licence, and shows the cautions', () => {
    expect(library.licence).toMatch(/^The MIT License/);
    expect(html).toContain(library.licence.trim());
    expect(html).toContain(library.script.replace(/^\/\*![^*]*\*\/\s*/, '').slice(0, 2000));
    expect(html).toContain(library.css);
    expect(html).toContain(CAUTIONS);
  });

  it('sets names from the data with textContent only: the page script never writes markup', () => {
    expect(() => new Function(PAGE_SCRIPT)).not.toThrow();
    expect(PAGE_SCRIPT).not.toMatch(/innerHTML|outerHTML|insertAdjacentHTML|document\.write/);
  });

  it('refuses a library that could end its own element', () => {
    const bad: ChartLibrary = { ...library, script: 'var x = "</script>";' };
    expect(caught(() => reportHtml(report, bad))).toMatchObject({ code: 'HR_ERR_REPLAY_CHART_LIBRARY' });
    const badCss: ChartLibrary = { ...library, css: '.a{}</style>' };
    expect(caught(() => reportHtml(report, badCss))).toMatchObject({ code: 'HR_ERR_REPLAY_CHART_LIBRARY' });
  });

  it('escapes what HTML could read as markup, and nothing else changes', () => {
    const value = { a: '</script><!-- & \u2028 \u2029 >', b: [1, 2.5, null] };
    const text = scriptSafeJson(value);
    expect(text).not.toMatch(/[<>&\u2028\u2029]/);
    expect(JSON.parse(text)).toEqual(value);
  });
});
