/**
 * Writes the Grafana dashboards of this directory: `npm run dashboards`. The JSON files are committed
 * beside this script and test/unit/dashboards checks that they are what it writes, so edit here, not there.
 * Built from a few helpers so that every panel reads the `datasource` variable and every query uses the
 * same label matchers.
 */
import { writeFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

/** Grafana 10.4 / 11.0 write this schema version; later releases migrate it on load. */
export const SCHEMA_VERSION = 39;

const DS = { type: 'prometheus', uid: '${datasource}' } as const;

type Json = Record<string, unknown>;

interface Target {
  readonly expr: string;
  readonly legend?: string;
  /** Instant table query (for table panels) rather than a range query. */
  readonly table?: boolean;
}

interface PanelSpec {
  readonly title: string;
  readonly description: string;
  readonly type: 'timeseries' | 'stat' | 'table' | 'state-timeline';
  readonly targets: readonly Target[];
  readonly w: number;
  readonly h: number;
  readonly unit?: string;
  readonly min?: number;
  readonly max?: number;
  /** Threshold lines (timeseries) or colour steps (stat, table): value → colour. */
  readonly steps?: readonly (readonly [number, string])[];
  readonly overrides?: readonly Json[];
  readonly transformations?: readonly Json[];
  readonly mappings?: readonly Json[];
}

type Item = PanelSpec | { readonly row: string };

function variable(name: string, label: string, definition: string, options: { all?: boolean } = {}): Json {
  return {
    name,
    label,
    type: 'query',
    datasource: DS,
    query: definition,
    definition,
    refresh: 2, // on time range change: new models and segments appear without a reload
    sort: 1,
    multi: options.all === true,
    includeAll: options.all === true,
    ...(options.all === true ? { allValue: '.*' } : {}),
    current: {},
    options: [],
    regex: '',
    hide: 0,
  };
}

const DATASOURCE_VARIABLE: Json = {
  name: 'datasource',
  label: 'Prometheus',
  type: 'datasource',
  query: 'prometheus',
  current: {},
  options: [],
  regex: '',
  refresh: 1,
  hide: 0,
  multi: false,
  includeAll: false,
};

const JOB_VARIABLE = variable('job', 'Scrape job', 'label_values(headroom_events_total, job)', { all: true });
const WINDOW_VARIABLE = variable('window', 'Window', 'label_values(headroom_window_events{job=~"$job"}, window)');
const THRESHOLD_VARIABLE = variable('threshold', 'Margin threshold θ', 'label_values(headroom_low_margin_ratio{job=~"$job"}, threshold)');

function target(t: Target, i: number): Json {
  return {
    refId: String.fromCharCode(65 + i),
    datasource: DS,
    expr: t.expr,
    legendFormat: t.legend ?? '__auto',
    range: t.table !== true,
    instant: t.table === true,
    ...(t.table === true ? { format: 'table' } : {}),
  };
}

function thresholds(steps: PanelSpec['steps']): Json {
  return { mode: 'absolute', steps: [{ color: 'green', value: null }, ...(steps ?? []).map(([value, color]) => ({ color, value }))] };
}

function panel(spec: PanelSpec, id: number, x: number, y: number): Json {
  const custom: Json =
    spec.type === 'timeseries'
      ? { drawStyle: 'line', lineWidth: 1, fillOpacity: 0, showPoints: 'never', spanNulls: false, thresholdsStyle: { mode: spec.steps ? 'line' : 'off' } }
      : spec.type === 'state-timeline'
        ? { fillOpacity: 80, lineWidth: 0 }
        : {};
  const options: Json =
    spec.type === 'timeseries'
      ? { legend: { displayMode: 'list', placement: 'bottom', showLegend: true }, tooltip: { mode: 'multi', sort: 'desc' } }
      : spec.type === 'stat'
        ? { reduceOptions: { calcs: ['lastNotNull'], fields: '', values: false }, colorMode: 'value', graphMode: 'none', textMode: 'auto', justifyMode: 'auto', orientation: 'auto' }
        : spec.type === 'state-timeline'
          ? { showValue: 'never', mergeValues: true, alignValue: 'left', rowHeight: 0.9, legend: { displayMode: 'list', placement: 'bottom', showLegend: true }, tooltip: { mode: 'single', sort: 'none' } }
          : { showHeader: true, cellHeight: 'sm', footer: { show: false, reducer: ['sum'], fields: '' } };
  return {
    id,
    type: spec.type,
    title: spec.title,
    description: spec.description,
    datasource: DS,
    gridPos: { h: spec.h, w: spec.w, x, y },
    targets: spec.targets.map(target),
    fieldConfig: {
      defaults: {
        custom,
        unit: spec.unit ?? 'short',
        ...(spec.min !== undefined ? { min: spec.min } : {}),
        ...(spec.max !== undefined ? { max: spec.max } : {}),
        color: { mode: spec.type === 'timeseries' ? 'palette-classic' : 'thresholds' },
        thresholds: thresholds(spec.steps),
        mappings: spec.mappings ?? [],
      },
      overrides: spec.overrides ?? [],
    },
    options,
    transformations: spec.transformations ?? [],
  };
}

/** Lays panels out left to right in a 24-column grid, a row header starting a new line. */
function layout(items: readonly Item[]): Json[] {
  const out: Json[] = [];
  let id = 1;
  let x = 0;
  let y = 0;
  let lineHeight = 0;
  for (const item of items) {
    if ('row' in item) {
      y += lineHeight;
      out.push({ id: id++, type: 'row', title: item.row, collapsed: false, gridPos: { h: 1, w: 24, x: 0, y }, panels: [] });
      y += 1;
      x = 0;
      lineHeight = 0;
      continue;
    }
    if (x + item.w > 24) {
      y += lineHeight;
      x = 0;
      lineHeight = 0;
    }
    out.push(panel(item, id++, x, y));
    x += item.w;
    lineHeight = Math.max(lineHeight, item.h);
  }
  return out;
}

function dashboard(uid: string, title: string, description: string, variables: readonly Json[], items: readonly Item[], links: readonly Json[]): Json {
  return {
    uid,
    title,
    description,
    tags: ['headroom'],
    editable: true,
    graphTooltip: 1, // shared crosshair: the same moment across the margin, drift and intake panels
    refresh: '1m',
    time: { from: 'now-6h', to: 'now' },
    timepicker: {},
    timezone: 'browser',
    schemaVersion: SCHEMA_VERSION,
    version: 1,
    annotations: { list: [{ builtIn: 1, datasource: { type: 'grafana', uid: '-- Grafana --' }, enable: true, hide: true, iconColor: 'rgba(0, 211, 255, 1)', name: 'Annotations & Alerts', type: 'dashboard' }] },
    templating: { list: [DATASOURCE_VARIABLE, ...variables] },
    links,
    panels: layout(items),
  };
}

// PSI 0.1 / 0.25 are the usual rule-of-thumb bands (common practice); KS 0.1 and the rest are headroom's
// own defaults, the same as in headroom-rules.yml.
const PSI_STEPS = [
  [0.1, 'orange'],
  [0.25, 'red'],
] as const;
const KS_STEPS = [[0.1, 'red']] as const;
const firingMappings = [{ type: 'value', options: { '0': { text: 'quiet', color: 'green', index: 0 }, '1': { text: 'firing', color: 'red', index: 1 } } }];
const dashedLine = (name: string, extra: readonly Json[] = []): Json => ({
  matcher: { id: 'byName', options: name },
  properties: [{ id: 'custom.lineStyle', value: { fill: 'dash', dash: [10, 10] } }, ...extra],
});
const rename = (names: Record<string, string>, hide: readonly string[] = ['Time']): Json[] => [
  { id: 'merge', options: {} },
  { id: 'organize', options: { excludeByName: Object.fromEntries(hide.map((h) => [h, true])), renameByName: names } },
];

export function overviewDashboard(): Json {
  const job = 'job=~"$job"';
  const models = `${job},model=~"$model"`;
  const allOf = `${models},segment="all"`;
  return dashboard(
    'headroom-overview',
    'headroom: all models',
    'Every watched model version at a glance: margins against the reference, drift, intake and the watcher itself.',
    [JOB_VARIABLE, variable('model', 'Model', 'label_values(headroom_events_total{job=~"$job"}, model)', { all: true }), WINDOW_VARIABLE, THRESHOLD_VARIABLE],
    [
      { row: 'Watchers' },
      { type: 'stat', title: 'Watchers answering', description: 'Targets of the scrape job whose last scrape succeeded.', w: 6, h: 4, targets: [{ expr: `sum(up{${job}})` }] },
      { type: 'stat', title: 'Model versions watched', description: 'Model versions with events counted by the watchers.', w: 6, h: 4, targets: [{ expr: `count(count by (model, version) (headroom_events_total{${models}}))` }] },
      { type: 'stat', title: 'Series watched', description: 'Series (model, version, segment) kept by the watchers.', w: 6, h: 4, targets: [{ expr: `sum(headroom_series{${models}})` }] },
      { type: 'stat', title: 'Margin alerts firing', description: 'Series whose headroom alert rule fires now.', w: 6, h: 4, steps: [[1, 'red']], targets: [{ expr: `sum(headroom_alert_firing{${models}})` }] },
      { row: 'Model versions' },
      {
        type: 'table',
        title: 'Where each model version stands',
        description: 'Whole-model figures (segment "all") in the chosen window and at the chosen threshold θ.',
        w: 24,
        h: 8,
        targets: [
          { expr: `sum by (model, version) (rate(headroom_events_total{${allOf}}[$__rate_interval]))`, table: true },
          { expr: `max by (model, version) (headroom_low_margin_ratio{${allOf},window="$window",threshold="$threshold"})`, table: true },
          { expr: `max by (model, version) (headroom_reference_low_margin_ratio{${allOf},threshold="$threshold"})`, table: true },
          { expr: `max by (model, version) (headroom_drift_psi{${allOf},window="$window"})`, table: true },
          { expr: `max by (model, version) (headroom_drift_ks{${allOf},window="$window"})`, table: true },
        ],
        transformations: rename({ 'Value #A': 'events/s', 'Value #B': 'low-margin share', 'Value #C': 'reference share', 'Value #D': 'PSI', 'Value #E': 'KS distance' }),
        overrides: [
          { matcher: { id: 'byRegexp', options: '.*share' }, properties: [{ id: 'unit', value: 'percentunit' }] },
          { matcher: { id: 'byName', options: 'model' }, properties: [{ id: 'links', value: [{ title: 'Open this model', url: '/d/headroom-model/headroom-one-model?${datasource:queryparam}&${job:queryparam}&var-model=${__data.fields.model}&var-version=${__data.fields.version}' }] }] },
        ],
      },
      {
        type: 'timeseries',
        title: 'Low-margin share by model version',
        description: 'Share of predictions with a confidence margin below θ, whole model, in the chosen window.',
        w: 12,
        h: 8,
        unit: 'percentunit',
        min: 0,
        targets: [{ expr: `headroom_low_margin_ratio{${allOf},window="$window",threshold="$threshold"}`, legend: '{{model}} {{version}}' }],
      },
      {
        type: 'timeseries',
        title: 'Distance to the share-rise alert',
        description: 'Lower bound of the live share divided by the level the alert allows (reference × (1 + tolerance)); above 1 the alert condition holds. Needs the recording rules of headroom-rules.yml.',
        w: 12,
        h: 8,
        min: 0,
        steps: [[1, 'red']],
        targets: [
          {
            expr: `headroom:low_margin_ratio:wilson_lower95{${allOf},window="$window",threshold="$threshold"} / ignoring(window) group_left() headroom:reference_low_margin_ratio:alert_level{${allOf},threshold="$threshold"}`,
            legend: '{{model}} {{version}}',
          },
        ],
      },
      { type: 'timeseries', title: 'PSI by model version', description: 'Population stability index of the window over the reference deciles; 0.1 and 0.25 are the usual bands (common practice).', w: 12, h: 8, min: 0, steps: PSI_STEPS, targets: [{ expr: `headroom_drift_psi{${allOf},window="$window"}`, legend: '{{model}} {{version}}' }] },
      { type: 'timeseries', title: 'KS distance by model version', description: 'Largest gap between the live and reference margin CDFs; the alert default is 0.1.', w: 12, h: 8, min: 0, max: 1, steps: KS_STEPS, targets: [{ expr: `headroom_drift_ks{${allOf},window="$window"}`, legend: '{{model}} {{version}}' }] },
      { row: 'Intake' },
      { type: 'timeseries', title: 'Events per second', description: 'Scored events counted, whole model.', w: 12, h: 7, unit: 'ops', targets: [{ expr: `sum by (model, version) (rate(headroom_events_total{${allOf}}[$__rate_interval]))`, legend: '{{model}} {{version}}' }] },
      { type: 'timeseries', title: 'Rejected messages per second', description: 'Messages turned away, by reason code (no model: a message may fail before its model is known).', w: 12, h: 7, unit: 'ops', targets: [{ expr: `sum by (reason) (rate(headroom_events_rejected_total{${job}}[$__rate_interval]))`, legend: '{{reason}}' }] },
      { type: 'timeseries', title: 'Consumer lag', description: 'Messages not yet read, per partition.', w: 8, h: 7, targets: [{ expr: `sum by (topic, partition) (headroom_consumer_lag_messages{${job}})`, legend: '{{topic}}/{{partition}}' }] },
      { type: 'timeseries', title: 'Checkpoint age', description: 'Time since each partition state was saved; the alert default is 5 min.', w: 8, h: 7, unit: 's', steps: [[300, 'red']], targets: [{ expr: `max by (topic, partition) (headroom_checkpoint_age_seconds{${job}})`, legend: '{{topic}}/{{partition}}' }] },
      {
        type: 'table',
        title: 'References in force',
        description: '1 when the model version has a reference to compare with; reload failing 1 while the latest read of its file failed.',
        w: 8,
        h: 7,
        targets: [
          { expr: `max by (model, version) (headroom_reference_loaded{${models}})`, table: true },
          { expr: `max by (model) (headroom_reference_reload_failing{${models}})`, table: true },
        ],
        transformations: rename({ 'Value #A': 'reference loaded', 'Value #B': 'reload failing' }),
      },
      { row: 'Alerts' },
      {
        type: 'state-timeline',
        title: 'Margin alerts',
        description: 'Each headroom alert rule per series: quiet or firing.',
        w: 24,
        h: 8,
        mappings: firingMappings,
        steps: [[1, 'red']],
        targets: [{ expr: `max by (model, version, segment, rule) (headroom_alert_firing{${models}})`, legend: '{{model}} {{version}} {{segment}} {{rule}}' }],
      },
    ],
    [{ title: 'One model', type: 'link', url: '/d/headroom-model/headroom-one-model', includeVars: true, keepTime: true, icon: 'dashboard' }],
  );
}

export function modelDashboard(): Json {
  const job = 'job=~"$job"';
  const version = `${job},model="$model",version="$version"`;
  const series = `${version},segment="$segment"`;
  return dashboard(
    'headroom-model',
    'headroom: one model',
    'One model version and segment: its low-margin share against the reference band, margin quantiles, drift, intake and alerts.',
    [
      JOB_VARIABLE,
      variable('model', 'Model', 'label_values(headroom_events_total{job=~"$job"}, model)'),
      variable('version', 'Version', 'label_values(headroom_events_total{job=~"$job",model="$model"}, version)'),
      variable('segment', 'Segment', 'label_values(headroom_events_total{job=~"$job",model="$model",version="$version"}, segment)'),
      WINDOW_VARIABLE,
      THRESHOLD_VARIABLE,
    ],
    [
      { row: 'Margins' },
      {
        type: 'timeseries',
        title: 'Low-margin share against the reference band',
        description: 'Live share of predictions with a confidence margin below θ and its 95% Wilson lower bound; the band runs from the reference share up to the level the share-rise alert allows. Needs the recording rules of headroom-rules.yml.',
        w: 16,
        h: 9,
        unit: 'percentunit',
        min: 0,
        targets: [
          { expr: `headroom_low_margin_ratio{${series},window="$window",threshold="$threshold"}`, legend: 'live share' },
          { expr: `headroom:low_margin_ratio:wilson_lower95{${series},window="$window",threshold="$threshold"}`, legend: 'live share, 95% lower bound' },
          { expr: `headroom_reference_low_margin_ratio{${series},threshold="$threshold"}`, legend: 'reference share' },
          { expr: `headroom:reference_low_margin_ratio:alert_level{${series},threshold="$threshold"}`, legend: 'alert level' },
        ],
        overrides: [
          dashedLine('reference share', [{ id: 'color', value: { mode: 'fixed', fixedColor: 'green' } }]),
          dashedLine('alert level', [
            { id: 'color', value: { mode: 'fixed', fixedColor: 'orange' } },
            { id: 'custom.fillBelowTo', value: 'reference share' },
            { id: 'custom.fillOpacity', value: 15 },
          ]),
          dashedLine('live share, 95% lower bound'),
        ],
      },
      { type: 'stat', title: 'Events in the window', description: 'The n behind every share and statistic of the window; the alerts want at least 200.', w: 8, h: 9, targets: [{ expr: `headroom_window_events{${series},window="$window"}` }] },
      { type: 'timeseries', title: 'Margin quantiles', description: 'Confidence-margin quantiles of the window (from the sketch).', w: 12, h: 8, unit: 'none', min: 0, max: 1, targets: [{ expr: `headroom_margin_quantile{${series},window="$window"}`, legend: 'q{{level}}' }] },
      { type: 'timeseries', title: 'Low-margin share by segment', description: 'The same share for every segment of this version.', w: 12, h: 8, unit: 'percentunit', min: 0, targets: [{ expr: `headroom_low_margin_ratio{${version},window="$window",threshold="$threshold"}`, legend: '{{segment}}' }] },
      { row: 'Drift against the reference' },
      { type: 'timeseries', title: 'PSI', description: 'Population stability index over the reference deciles; 0.1 and 0.25 are the usual bands (common practice).', w: 8, h: 8, min: 0, steps: PSI_STEPS, targets: [{ expr: `headroom_drift_psi{${series}}`, legend: '{{window}}' }] },
      { type: 'timeseries', title: 'KS distance', description: 'Kolmogorov-Smirnov D between the live and reference margins; the alert default is 0.1.', w: 8, h: 8, min: 0, max: 1, steps: KS_STEPS, targets: [{ expr: `headroom_drift_ks{${series}}`, legend: '{{window}}' }] },
      { type: 'timeseries', title: 'Wasserstein distance', description: 'Mean absolute shift between the live and reference margins (Wasserstein-1).', w: 8, h: 8, min: 0, targets: [{ expr: `headroom_drift_wasserstein{${series}}`, legend: '{{window}}' }] },
      {
        type: 'table',
        title: 'Drift by segment now',
        description: 'Every segment of this version in the chosen window.',
        w: 24,
        h: 7,
        targets: [
          { expr: `max by (segment) (headroom_window_events{${version},window="$window"})`, table: true },
          { expr: `max by (segment) (headroom_drift_psi{${version},window="$window"})`, table: true },
          { expr: `max by (segment) (headroom_drift_ks{${version},window="$window"})`, table: true },
          { expr: `max by (segment) (headroom_drift_wasserstein{${version},window="$window"})`, table: true },
        ],
        transformations: rename({ 'Value #A': 'events in window', 'Value #B': 'PSI', 'Value #C': 'KS distance', 'Value #D': 'Wasserstein' }),
      },
      { row: 'Intake and the watcher' },
      { type: 'timeseries', title: 'Events per second', description: 'Scored events counted for this series.', w: 8, h: 7, unit: 'ops', targets: [{ expr: `sum(rate(headroom_events_total{${series}}[$__rate_interval]))`, legend: '$segment' }] },
      { type: 'timeseries', title: 'Rejected messages per second', description: 'Of the whole watcher, by reason (rejections carry no model).', w: 8, h: 7, unit: 'ops', targets: [{ expr: `sum by (reason) (rate(headroom_events_rejected_total{${job}}[$__rate_interval]))`, legend: '{{reason}}' }] },
      { type: 'timeseries', title: 'Consumer lag', description: 'Messages not yet read, per partition.', w: 8, h: 7, targets: [{ expr: `sum by (topic, partition) (headroom_consumer_lag_messages{${job}})`, legend: '{{topic}}/{{partition}}' }] },
      { type: 'timeseries', title: 'Checkpoint age', description: 'Time since each partition state was saved.', w: 8, h: 7, unit: 's', steps: [[300, 'red']], targets: [{ expr: `max by (topic, partition) (headroom_checkpoint_age_seconds{${job}})`, legend: '{{topic}}/{{partition}}' }] },
      { type: 'stat', title: 'Reference age', description: 'Time since the reference of this version was read.', w: 8, h: 7, unit: 's', targets: [{ expr: `time() - max(headroom_reference_loaded_timestamp_seconds{${version}})` }] },
      {
        type: 'state-timeline',
        title: 'Margin alerts of this version',
        description: 'Each headroom alert rule per segment: quiet or firing.',
        w: 8,
        h: 7,
        mappings: firingMappings,
        steps: [[1, 'red']],
        targets: [{ expr: `max by (segment, rule) (headroom_alert_firing{${version}})`, legend: '{{segment}} {{rule}}' }],
      },
    ],
    [{ title: 'All models', type: 'link', url: '/d/headroom-overview/headroom-all-models', includeVars: false, keepTime: true, icon: 'dashboard' }],
  );
}

/** File name → contents, as committed. */
export function renderDashboards(): Map<string, string> {
  const text = (d: Json): string => `${JSON.stringify(d, null, 2)}\n`;
  return new Map([
    ['headroom-overview.json', text(overviewDashboard())],
    ['headroom-model.json', text(modelDashboard())],
  ]);
}

if (process.argv[1] !== undefined && fileURLToPath(import.meta.url) === process.argv[1]) {
  const dir = dirname(fileURLToPath(import.meta.url));
  for (const [name, contents] of renderDashboards()) {
    writeFileSync(join(dir, name), contents);
    process.stdout.write(`wrote dashboards/${name}\n`);
  }
}
