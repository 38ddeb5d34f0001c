/**
 * report.html: one self-contained page that opens offline (from disk, on a machine with no network):
 * the chart library inlined (CSS and minified code, with its licence), the report as JSON in a
 * <script type="application/json"> block, and our own script (html-script.ts) that draws from it.
 * Pure: the caller reads the library (chart-library.ts) and writes the file.
 *
 * Safety. Model, version and segment names come from events. The only text of the report in the markup
 * is the JSON block, in which every `<`, `>` and `&` is written as a \u escape, so no name (e.g.
 * `</script><script>...`) can end the block or open a tag; the script then sets names with textContent.
 * The rest of the markup is fixed text.
 */
import { HeadroomError } from '../errors.js';
import type { ChartLibrary } from './chart-library.js';
import { PAGE_SCRIPT } from './html-script.js';
import type { ReplayReport } from './report.js';

/** The README's cautions, shown on the page as they are in README.md "Cautions". */
export const CAUTIONS =
  'A margin alert is a statistical signal, not a verdict on any single prediction or person. Where a monitored ' +
  "model's decisions affect people (credit, health, hiring, benefits), it does not replace validation, human " +
  'review, or the model-risk rules that apply to you. A stable margin distribution does not prove a model is ' +
  'right: a model can be confidently wrong on inputs it has never seen.';

/** JSON that can sit inside a <script> element: the characters HTML could read as markup become \u escapes. */
export function scriptSafeJson(value: unknown): string {
  return JSON.stringify(value)
    .replace(/</g, '\\u003c')
    .replace(/>/g, '\\u003e')
    .replace(/&/g, '\\u0026')
    .replace(/\u2028/g, '\\u2028')
    .replace(/\u2029/g, '\\u2029');
}

/** Code copied into an element must not be able to end it early. */
function inlinable(text: string, element: 'script' | 'style', what: string): string {
  if (new RegExp(`</${element}|<!--`, 'i').test(text)) {
    throw new HeadroomError('HR_ERR_REPLAY_CHART_LIBRARY', `${what} holds "</${element}" or "<!--" and cannot be inlined into report.html`);
  }
  return text;
}

function libraryScript(library: ChartLibrary): string {
  // The build's banner is only a link to the project; the licence comment below names it instead.
  const code = library.script.replace(/^\/\*![^*]*\*\/\s*/, '');
  const licence = library.licence.replace(/\*\//g, '* /').trim();
  return `/*! ${library.name} ${library.version}, inlined by headroom under its MIT licence:\n\n${licence}\n*/\n${inlinable(code, 'script', library.name)}`;
}

const STYLE = `
:root { --ink: #1d2125; --muted: #5b6067; --paper: #fbfaf6; --card: #ffffff; --rule: #dedbd2; --accent: #0072B2; }
* { box-sizing: border-box; }
body { margin: 0; background: var(--paper); color: var(--ink); font: 15px/1.5 system-ui, -apple-system, "Segoe UI", sans-serif; }
main { max-width: 1120px; margin: 0 auto; padding: 28px 24px 48px; }
header.top { border-left: 6px solid var(--accent); padding: 2px 0 2px 16px; margin-bottom: 18px; }
h1 { font-size: 24px; margin: 0 0 2px; letter-spacing: -0.01em; }
h1 small { font-weight: 400; color: var(--muted); font-size: 15px; margin-left: 8px; }
h2 { font-size: 19px; margin: 0 0 4px; overflow-wrap: anywhere; }
h3 { font-size: 16px; margin: 0 0 4px; }
dl.facts { display: grid; grid-template-columns: max-content 1fr; gap: 2px 14px; margin: 8px 0 0; font-size: 14px; }
dl.facts dt { color: var(--muted); }
dl.facts dd { margin: 0; overflow-wrap: anywhere; }
.caution { background: #fff7e0; border: 1px solid #e8d9a8; border-radius: 6px; padding: 10px 14px; font-size: 14px; margin: 0 0 22px; }
section.card { background: var(--card); border: 1px solid var(--rule); border-radius: 8px; padding: 16px 18px; margin: 0 0 18px; }
p.what { color: var(--muted); font-size: 14px; margin: 0 0 8px; max-width: 80ch; }
.picker { display: flex; gap: 10px; align-items: center; flex-wrap: wrap; margin-bottom: 10px; }
.picker select { font: inherit; padding: 4px 6px; max-width: min(100%, 40em); text-overflow: ellipsis; }
ul.key { list-style: none; display: flex; flex-wrap: wrap; gap: 4px 18px; padding: 0; margin: 6px 0 0; font-size: 13px; color: var(--muted); }
ul.key li { display: flex; align-items: center; gap: 6px; }
ul.key .swatch { display: inline-block; width: 26px; height: 0; border-top: 3px solid; }
.chart { min-height: 40px; }
.note { color: var(--muted); font-style: italic; margin: 6px 0; }
table { border-collapse: collapse; font-size: 13px; width: 100%; }
th, td { text-align: left; padding: 4px 8px; border-bottom: 1px solid var(--rule); vertical-align: top; }
th { color: var(--muted); font-weight: 600; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
td.name { overflow-wrap: anywhere; }
button.link { background: none; border: 0; padding: 0; font: inherit; color: var(--accent); text-decoration: underline; cursor: pointer; text-align: left; }
details summary { cursor: pointer; color: var(--accent); margin: 4px 0; }
.scroll { overflow-x: auto; }
#problem { background: #fde8e0; border: 1px solid #d55e00; padding: 10px 14px; border-radius: 6px; }
footer { color: var(--muted); font-size: 12px; margin-top: 24px; }
`;

const BODY = `
<main>
  <header class="top">
    <h1>headroom replay report <small>margins against the reference, window by window</small></h1>
    <dl class="facts" id="facts"></dl>
  </header>
  <p class="caution" id="caution"><strong>Caution.</strong> ${CAUTIONS}</p>
  <p id="problem" role="alert" hidden></p>
  <p id="empty" class="note" hidden>The replay produced no windows: there is nothing to draw.</p>

  <section class="card" id="series">
    <div class="picker">
      <label for="series-select">Series</label>
      <select id="series-select"></select>
    </div>
    <h2 id="series-title"></h2>
    <p class="what" id="series-facts"></p>

    <h3>Low-margin share over time</h3>
    <p class="what">Each window's share of predictions whose confidence margin is below θ (solid line; shaded: its
    Wilson 95% interval), against the share the reference data had below the same θ (dashed). A solid line
    that stays above its dashed one means the model is less sure of itself than it was on its reference data.</p>
    <div class="chart" id="chart-low-margin" role="img" aria-label="Low-margin share per window against the reference share"></div>
    <ul class="key" id="key-low-margin"></ul>

    <h3 style="margin-top:18px">Drift statistics over time</h3>
    <p class="what">How far each window's margin distribution is from the reference's. KS D is the largest gap
    between the two cumulative distributions; Wasserstein-1 is how far, on average, margin mass has to move
    (both 0 to 1, left axis). PSI compares the shares in the reference's deciles (right axis); 0.1 and 0.25
    are the usual rule-of-thumb bands (common practice), not laws.</p>
    <p class="note" id="note-drift" hidden></p>
    <div class="chart" id="chart-drift" role="img" aria-label="KS D, Wasserstein-1 and PSI per window"></div>
    <ul class="key" id="key-drift"></ul>

    <h3 style="margin-top:18px">Margin distribution of chosen windows against the reference</h3>
    <p class="what">The share of predictions with a confidence margin at or below each value (a cumulative
    distribution), for this series' first window, its last, and the one furthest from the reference by KS D,
    against the reference (thick grey). A curve above the reference's holds more low-margin predictions; where
    it crosses a dotted θ line, its height is that window's low-margin share at θ.</p>
    <p class="note" id="note-cdf" hidden></p>
    <div class="chart" id="chart-cdf" role="img" aria-label="Cumulative margin distributions of chosen windows and of the reference"></div>
    <ul class="key" id="key-cdf"></ul>

    <details>
      <summary>This series' figures, window by window</summary>
      <div class="scroll"><table><thead id="windows-head"></thead><tbody id="windows-body"></tbody></table></div>
    </details>
  </section>

  <section class="card">
    <h3>All series</h3>
    <p class="what">Peak low-margin share (at the largest θ) and peak KS D over the replay; choose a series to draw it.</p>
    <div class="scroll"><table>
      <thead><tr><th>series</th><th>windows</th><th>events</th><th>peak share</th><th>its reference</th><th>peak KS D</th></tr></thead>
      <tbody id="overview-body"></tbody>
    </table></div>
  </section>
  <footer>Written by headroom replay. The same figures are in report.json and report.csv beside this file.</footer>
</main>
`;

export function reportHtml(report: ReplayReport, library: ChartLibrary): string {
  return [
    '<!doctype html>',
    '<html lang="en">',
    '<head>',
    '<meta charset="utf-8">',
    '<meta name="viewport" content="width=device-width, initial-scale=1">',
    // No favicon request, and nothing may be fetched: the page is all in this file.
    '<link rel="icon" href="data:,">',
    `<meta http-equiv="Content-Security-Policy" content="default-src 'none'; script-src 'unsafe-inline'; style-src 'unsafe-inline'; img-src data:">`,
    '<title>headroom replay report</title>',
    `<style>\n${inlinable(library.css, 'style', `${library.name} CSS`)}\n${STYLE}</style>`,
    '</head>',
    '<body>',
    BODY,
    `<script type="application/json" id="report-data">${scriptSafeJson(report)}</script>`,
    `<script>\n${libraryScript(library)}\n</script>`,
    `<script>${PAGE_SCRIPT}</script>`,
    '</body>',
    '</html>',
    '',
  ].join('\n');
}
