// headroom's live page: reads the JSON API every few seconds and draws the chosen series with uPlot.
//
// Every model, version and segment name comes from events and is untrusted: it is only ever set with
// textContent (or as an option's text), never as markup, and only ever sent back percent-encoded in a path.
// The list is drawn once per refresh by key, touching only what changed, and only the chosen series'
// figures are fetched, so a watcher with hundreds of series stays quick to read.
//
// Colours are the Okabe–Ito palette, as in the replay report (src/replay/html-script.ts), and each curve
// also differs by width or dash, so no chart relies on telling red from green.

const REFRESH_MS = 5000;
const CDF_POINTS = 101;
const LIVE_COLOUR = '#D55E00';
const REFERENCE_COLOUR = '#3b3f45';
const THRESHOLD_COLOURS = ['#0072B2', '#E69F00', '#CC79A7', '#009E73', '#56B4E9', '#D55E00'];
// Worst first: the phase a series shows when several rules cover it.
const PHASE_ORDER = ['firing', 'easing', 'brewing', 'resting', 'calm'];
const PHASE_WORDS = {
  firing: 'raised: the condition held long enough',
  easing: 'still raised: back under the clear level, waiting for it to stay there',
  brewing: 'condition seen, waiting for it to hold',
  resting: 'cleared recently; will not fire again until the rest ends',
  calm: 'nothing seen',
};

const state = {
  series: [],
  rows: new Map(),
  alerts: { rules: [], alerts: [], recent: [] },
  selected: null,
  window: null,
  paused: false,
  timer: null,
  charts: {},
  lastDrawnKey: null,
  // Each refresh takes a number; only the latest schedules the next, so a click during a refresh never
  // leaves two loops running.
  generation: 0,
};

function byId(id) { return document.getElementById(id); }
function el(tag, className, text) {
  const node = document.createElement(tag);
  if (className) node.className = className;
  if (text !== undefined && text !== null) node.textContent = String(text);
  return node;
}
function clear(node) { while (node.firstChild) node.removeChild(node.firstChild); }
function setText(node, text) { if (node.textContent !== text) node.textContent = text; }
function keyOf(s) { return JSON.stringify([s.model, s.version, s.segment]); }
function nameOf(s) { return s.model + ' @ ' + s.version + ' · ' + s.segment; }
function count(n) { return Number(n).toLocaleString('en-US'); }
function pct(x) { return x === null || x === undefined ? '–' : (100 * x).toFixed(1) + '%'; }
function fixed(x, digits) { return x === null || x === undefined ? '–' : Number(x).toFixed(digits); }
function utcTime(iso) { return iso === null || iso === undefined ? '–' : iso.replace('T', ' ').replace(/\.\d{3}Z$/, ' UTC').replace(/Z$/, ' UTC'); }
function seriesPath(s) { return 'api/series/' + [s.model, s.version, s.segment].map(encodeURIComponent).join('/'); }

async function getJson(path) {
  const res = await fetch(path, { headers: { accept: 'application/json' }, cache: 'no-store' });
  let body = null;
  try { body = await res.json(); } catch { body = null; }
  if (!res.ok) {
    const error = new Error((body && body.error && body.error.message) || 'HTTP ' + res.status);
    error.status = res.status;
    throw error;
  }
  return body;
}

// ---- the series list -------------------------------------------------------------------------

function phaseOfSeries(s) {
  let worst = null;
  for (const a of state.alerts.alerts) {
    if (a.model !== s.model || a.version !== s.version || a.segment !== s.segment) continue;
    if (worst === null || PHASE_ORDER.indexOf(a.phase) < PHASE_ORDER.indexOf(worst)) worst = a.phase;
  }
  return worst;
}

function referenceWords(reference) {
  if (reference.state !== 'loaded') return 'no reference: live figures only';
  if (reference.file === 'reload-failed') return 'reference kept (its file failed to reload)';
  if (reference.file === 'replaced') return 'reference of an earlier file';
  return 'compared with a reference';
}

function makeRow(s, key) {
  const li = el('li');
  const button = el('button');
  button.type = 'button';
  const name = el('span', 's-name');
  const sub = el('span', 's-sub');
  const phase = el('span', 's-phase');
  const badge = el('span', 'phase');
  phase.appendChild(badge);
  button.appendChild(name);
  button.appendChild(phase);
  button.appendChild(sub);
  button.addEventListener('click', () => select(key));
  li.appendChild(button);
  return { li, button, name, sub, badge, text: '' };
}

function renderList() {
  const list = byId('series-list');
  const filter = byId('filter').value.trim().toLowerCase();
  const seen = new Set();
  let shown = 0;
  state.series.forEach((s, i) => {
    const key = keyOf(s);
    seen.add(key);
    let row = state.rows.get(key);
    if (!row) {
      row = makeRow(s, key);
      state.rows.set(key, row);
    }
    setText(row.name, s.model + ' · ' + s.segment);
    setText(row.sub, s.version + ' · ' + count(s.events) + ' events · ' + referenceWords(s.reference));
    const phase = phaseOfSeries(s);
    setText(row.badge, phase === null ? 'no rules' : phase);
    const badgeClass = 'phase ' + (phase === null ? 'none' : phase);
    if (row.badge.className !== badgeClass) row.badge.className = badgeClass;
    row.badge.title = phase === null ? 'no alert rule covers this series' : PHASE_WORDS[phase] || '';
    row.button.setAttribute('aria-current', key === state.selected ? 'true' : 'false');
    row.text = (s.model + '\n' + s.version + '\n' + s.segment).toLowerCase();
    const hidden = filter !== '' && row.text.indexOf(filter) < 0;
    if (row.li.hidden !== hidden) row.li.hidden = hidden;
    if (!hidden) shown += 1;
    if (list.children[i] !== row.li) list.insertBefore(row.li, list.children[i] || null);
  });
  for (const [key, row] of state.rows) {
    if (!seen.has(key)) {
      row.li.remove();
      state.rows.delete(key);
    }
  }
  setText(byId('series-count'), filter === '' ? '(' + state.series.length + ')' : '(' + shown + ' of ' + state.series.length + ')');
  byId('series-none').hidden = state.series.length > 0;
}

function renderRaised() {
  const list = byId('raised-list');
  clear(list);
  const raised = state.alerts.alerts
    .filter((a) => a.phase !== 'calm')
    .sort((a, b) => PHASE_ORDER.indexOf(a.phase) - PHASE_ORDER.indexOf(b.phase));
  raised.forEach((a) => {
    const li = el('li');
    const button = el('button');
    button.type = 'button';
    button.appendChild(el('span', 'phase ' + a.phase, a.phase));
    button.appendChild(document.createTextNode(' ' + a.rule + ' · ' + nameOf(a)));
    button.title = PHASE_WORDS[a.phase] || '';
    button.addEventListener('click', () => select(keyOf(a)));
    li.appendChild(button);
    list.appendChild(li);
  });
  byId('raised-none').hidden = raised.length > 0;
  if (state.alerts.rules.length === 0) setText(byId('raised-none'), 'No alert rules are configured.');
  else setText(byId('raised-none'), 'None: every alert rule is calm for every series.');
}

// ---- charts ------------------------------------------------------------------------------------

const axisStyle = { stroke: '#4a4f55', grid: { stroke: '#e3e1da', width: 1 }, ticks: { stroke: '#d5d2c8', width: 1 } };
function axis(extra) { return Object.assign({}, axisStyle, extra); }
function chartWidth(node) { return Math.max(320, node.clientWidth); }

// 24-hour UTC times, with the date under the first time of each day.
function timeValues(u, splits) {
  let previous = null;
  return splits.map((t) => {
    const iso = new Date(t * 1000).toISOString();
    const day = iso.slice(0, 10);
    const text = day !== previous ? iso.slice(11, 16) + '\n' + day : iso.slice(11, 16);
    previous = day;
    return text;
  });
}

function key(list, items) {
  clear(list);
  items.forEach((item) => {
    const li = el('li');
    const swatch = el('span', 'swatch');
    swatch.style.borderTopColor = item.colour;
    swatch.style.borderTopStyle = item.style || 'solid';
    swatch.style.borderTopWidth = (item.width || 3) + 'px';
    swatch.dataset.colour = item.colour;
    li.appendChild(swatch);
    li.appendChild(el('span', '', item.label));
    list.appendChild(li);
  });
}

// Keeps one chart per slot: new data goes into the same chart while its curves stay the same ones.
function draw(slot, node, signature, opts, data) {
  const old = state.charts[slot];
  if (old && old.signature === signature) {
    old.chart.setData(data);
    return;
  }
  if (old) old.chart.destroy();
  clear(node);
  opts.width = chartWidth(node);
  opts.height = opts.height || 280;
  opts.legend = { show: false };
  opts.cursor = opts.cursor || { drag: { x: false, y: false } };
  state.charts[slot] = { chart: new uPlot(opts, data, node), signature, node };
}

function dropChart(slot, node) {
  const old = state.charts[slot];
  if (old) old.chart.destroy();
  delete state.charts[slot];
  clear(node);
}

function thresholdGuides(thresholds) {
  return (u) => {
    const ctx = u.ctx;
    ctx.save();
    ctx.strokeStyle = '#9a968b';
    ctx.setLineDash([1, 3]);
    ctx.lineWidth = 1;
    ctx.fillStyle = '#6b675e';
    ctx.font = '11px system-ui, sans-serif';
    thresholds.forEach((theta) => {
      const x = Math.round(u.valToPos(theta, 'x', true)) + 0.5;
      ctx.beginPath();
      ctx.moveTo(x, u.bbox.top);
      ctx.lineTo(x, u.bbox.top + u.bbox.height);
      ctx.stroke();
      ctx.fillText('θ ' + theta, x + 4, u.bbox.top + 12);
    });
    ctx.restore();
  };
}

function cdfChart(cdf, thresholds) {
  const node = byId('chart-cdf');
  const note = byId('cdf-note');
  const live = cdf.live.points;
  const reference = cdf.reference.state === 'loaded' ? cdf.reference.points : [];
  const grid = live.length > 0 ? live : reference;
  const notes = [];
  if (live.length === 0) notes.push('No events in the ' + cdf.window + ' window: only the reference is drawn.');
  if (cdf.reference.state !== 'loaded') notes.push('This series has no reference: only its live curve is drawn.');
  note.hidden = notes.length === 0;
  setText(note, notes.join(' '));
  if (grid.length === 0) {
    dropChart('cdf', node);
    clear(byId('key-cdf'));
    return;
  }
  const opts = {
    scales: { x: { time: false, range: [0, 1] }, y: { range: [0, 1] } },
    series: [{}],
    axes: [axis({ label: 'confidence margin' }), axis({ label: 'share at or below', values: (u, v) => v.map((x) => (100 * x).toFixed(0) + '%') })],
    hooks: { draw: [thresholdGuides(thresholds)] },
  };
  const data = [grid.map((p) => p[0])];
  const items = [];
  if (reference.length > 0) {
    opts.series.push({ label: 'reference', stroke: REFERENCE_COLOUR, width: 3.5 });
    data.push(reference.map((p) => p[1]));
    items.push({ colour: REFERENCE_COLOUR, width: 4, label: 'reference (' + count(cdf.reference.count) + ' margins' + (cdf.reference.segment !== 'all' || cdf.segment === 'all' ? '' : ', the version-wide one') + ')' });
  }
  if (live.length > 0) {
    opts.series.push({ label: 'live', stroke: LIVE_COLOUR, width: 2.25 });
    data.push(live.map((p) => p[1]));
    items.push({ colour: LIVE_COLOUR, label: 'live, last ' + cdf.window + ' (' + count(cdf.live.count) + ' margins)' });
  }
  key(byId('key-cdf'), items);
  draw('cdf', node, 'cdf:' + opts.series.map((s) => s.label).join('|') + ':' + thresholds.join(','), opts, data);
}

function historyChart(history) {
  const node = byId('chart-history');
  const note = byId('history-note');
  const buckets = history.buckets;
  if (buckets.length === 0) {
    note.hidden = false;
    setText(note, 'No buckets yet.');
    dropChart('history', node);
    clear(byId('key-history'));
    return;
  }
  note.hidden = history.reference.state === 'loaded';
  setText(note, history.reference.state === 'loaded' ? '' : 'This series has no reference: only its own share is drawn.');
  const xs = buckets.map((b) => b.startMs / 1000);
  const few = xs.length < 30;
  const data = [xs];
  const opts = {
    scales: { x: { time: true }, y: { range: (u, min, max) => [0, Math.min(1, Math.max(max * 1.1, 0.02))] } },
    tzDate: (ts) => uPlot.tzDate(new Date(ts * 1e3), 'Etc/UTC'),
    series: [{}],
    bands: [],
    axes: [axis({ label: 'bucket start (UTC)', values: timeValues, space: 60 }), axis({ label: 'share below θ', values: (u, v) => v.map((x) => (100 * x).toFixed(0) + '%') })],
  };
  const items = [];
  history.thresholds.forEach((theta, i) => {
    const colour = THRESHOLD_COLOURS[i % THRESHOLD_COLOURS.length];
    const at = (b) => b.lowMargin[i];
    const base = data.length;
    data.push(
      buckets.map((b) => (at(b).share === null ? null : at(b).upper)),
      buckets.map((b) => (at(b).share === null ? null : at(b).lower)),
      buckets.map((b) => at(b).share),
    );
    opts.series.push(
      { label: 'θ ' + theta + ' upper', stroke: colour, width: 0, points: { show: false } },
      { label: 'θ ' + theta + ' lower', stroke: colour, width: 0, points: { show: false } },
      { label: 'θ ' + theta, stroke: colour, width: 2, points: { show: few, size: 5, fill: colour } },
    );
    opts.bands.push({ series: [base, base + 1], fill: colour + '2e' });
    items.push({ colour, label: 'share below θ = ' + theta + ' (shaded: Wilson 95% interval)' });
    const ref = history.reference.state === 'loaded' ? history.reference.lowMargin[i] : null;
    if (ref && ref.share !== null) {
      const refBase = data.length;
      data.push(xs.map(() => ref.upper), xs.map(() => ref.lower), xs.map(() => ref.share));
      opts.series.push(
        { label: 'reference θ ' + theta + ' upper', stroke: REFERENCE_COLOUR, width: 0, points: { show: false } },
        { label: 'reference θ ' + theta + ' lower', stroke: REFERENCE_COLOUR, width: 0, points: { show: false } },
        { label: 'reference θ ' + theta, stroke: colour, width: 1.5, dash: [6, 4], points: { show: false } },
      );
      opts.bands.push({ series: [refBase, refBase + 1], fill: '#3b3f4526' });
      items.push({ colour, style: 'dashed', width: 2, label: 'reference share below θ = ' + theta + ': ' + pct(ref.share) + ' [' + pct(ref.lower) + ', ' + pct(ref.upper) + ']' });
    }
  });
  key(byId('key-history'), items);
  draw('history', node, 'history:' + opts.series.map((s) => s.label).join('|') + ':' + few, opts, data);
}

// ---- the chosen series ------------------------------------------------------------------------

function renderFacts(detail) {
  const c = detail.counters;
  const r = detail.reference;
  let text = count(detail.events) + ' events counted (' + count(c.added) + ' in the windows, ' + count(c.late) + ' late, ' + count(c.future) + ' from the future). ';
  if (r.state === 'loaded') {
    text += 'Compared with the reference of version ' + r.version + ' made ' + utcTime(r.createdAt) + ' (' + count(r.n) + ' margins';
    text += r.segment === detail.segment ? ')' : ', its ' + r.segment + ' segment)';
    if (r.file === 'reload-failed') text += '; its file failed to reload, so the last good copy is used';
    if (r.file === 'replaced') text += '; its file now holds another version';
    text += '.';
  } else {
    text += 'No reference is loaded for this series: live figures only.';
  }
  setText(byId('detail-facts'), text);
}

function renderWindows(detail) {
  const select = byId('window');
  const names = detail.views.map((v) => v.window);
  if (state.window === null || names.indexOf(state.window) < 0) state.window = names[0] || null;
  const current = Array.from(select.options).map((o) => o.value);
  if (current.join('\n') !== names.join('\n')) {
    clear(select);
    names.forEach((n) => {
      const option = el('option', '', n);
      option.value = n;
      select.appendChild(option);
    });
  }
  if (state.window !== null) select.value = state.window;
}

function twoLines(main, sub) {
  const td = el('td', 'num');
  td.appendChild(el('span', 'main', main));
  if (sub) td.appendChild(el('span', 'sub', sub));
  return td;
}

function renderDrift(detail) {
  const head = byId('drift-head');
  const body = byId('drift-body');
  clear(head);
  clear(body);
  const cols = ['window', 'events'];
  detail.thresholds.forEach((t) => cols.push('share < ' + t + ', live vs reference'));
  cols.push('KS D (p)', 'PSI', 'Wasserstein-1', 'median, live vs reference');
  const tr = el('tr');
  cols.forEach((c) => tr.appendChild(el('th', '', c)));
  head.appendChild(tr);
  detail.views.forEach((v) => {
    const row = el('tr');
    row.appendChild(el('td', '', v.window));
    row.appendChild(el('td', 'num', count(v.count)));
    detail.thresholds.forEach((t) => {
      const l = v.lowMargin.find((x) => x.threshold === t);
      if (!l || l.live.share === null) row.appendChild(twoLines(l && l.referenceShare !== null ? '– vs ' + pct(l.referenceShare) : '–', 'no events'));
      else row.appendChild(twoLines(pct(l.live.share) + ' vs ' + pct(l.referenceShare), '95%: ' + pct(l.live.lower) + ' – ' + pct(l.live.upper)));
    });
    const d = v.comparison;
    row.appendChild(twoLines(d ? fixed(d.ks.statistic, 3) : '–', d && d.ks.pValue !== null ? 'p ' + Number(d.ks.pValue).toPrecision(2) : ''));
    row.appendChild(el('td', 'num', d ? fixed(d.psi.value, 3) : '–'));
    row.appendChild(el('td', 'num', d ? fixed(d.wasserstein, 3) : '–'));
    const median = v.quantiles.find((q) => q.q === 0.5);
    row.appendChild(el('td', 'num', median ? fixed(median.live, 3) + ' vs ' + fixed(median.reference, 3) : '–'));
    body.appendChild(row);
  });
}

function renderLabels(detail) {
  const body = byId('labels-body');
  clear(body);
  const shown = detail.views.filter((v) => v.labels);
  byId('labels-none').hidden = shown.length > 0;
  shown.forEach((v) => {
    const l = v.labels;
    const row = el('tr');
    row.appendChild(el('td', '', v.window));
    row.appendChild(el('td', 'num', count(l.n)));
    const e = l.errorRate;
    row.appendChild(l.n === 0 ? el('td', 'num', '–') : twoLines(pct(e.share) + ' vs ' + pct(l.referenceErrorRate), '95%: ' + pct(e.lower) + ' – ' + pct(e.upper)));
    const c = l.calibration;
    row.appendChild(el('td', 'num', c ? fixed(c.ece, 3) + ' vs ' + fixed(c.referenceEce, 3) : '–'));
    const f = l.labelFree;
    row.appendChild(f ? twoLines(pct(f.estimate) + ' vs ' + pct(f.observed), 'calibrated model only') : el('td', 'num', '–'));
    body.appendChild(row);
  });
  const chosen = shown.find((v) => v.window === state.window) || shown[0];
  const loss = byId('loss-body');
  const reliability = byId('reliability-body');
  clear(loss);
  clear(reliability);
  // Without a labelled prediction in the window there is no curve to show, only dashes.
  byId('labels-detail').hidden = !chosen || chosen.labels.n === 0;
  if (!chosen || chosen.labels.n === 0) return;
  setText(byId('loss-title'), 'Margin loss, live vs reference (' + chosen.window + ')');
  chosen.labels.marginLoss.forEach((m) => {
    const row = el('tr');
    row.appendChild(el('td', 'num', String(m.theta)));
    row.appendChild(el('td', 'num', pct(m.live)));
    row.appendChild(el('td', 'num', pct(m.reference)));
    loss.appendChild(row);
  });
  const c = chosen.labels.calibration;
  const bins = c ? (c.live || c.reference || []) : [];
  const describeBin = (b) => (b ? count(b.count) + ', ' + fixed(b.meanPredicted, 3) + ', ' + fixed(b.observedRate, 3) : '–');
  bins.forEach((b, i) => {
    const row = el('tr');
    row.appendChild(el('td', '', fixed(b.lower, 1) + '–' + fixed(b.upper, 1)));
    row.appendChild(el('td', 'num', describeBin(c.live && c.live[i])));
    row.appendChild(el('td', 'num', describeBin(c.reference && c.reference[i])));
    reliability.appendChild(row);
  });
}

function same(a, s) { return a.model === s.model && a.version === s.version && a.segment === s.segment; }

function renderAlerts(s) {
  const body = byId('alerts-body');
  clear(body);
  const mine = state.alerts.alerts.filter((a) => same(a, s));
  byId('alerts-none').hidden = mine.length > 0;
  mine.forEach((a) => {
    const row = el('tr');
    row.appendChild(el('td', '', a.rule + ' (' + a.kind + ')'));
    const phase = el('td');
    const badge = el('span', 'phase ' + a.phase, a.phase);
    badge.title = PHASE_WORDS[a.phase] || '';
    phase.appendChild(badge);
    row.appendChild(phase);
    row.appendChild(el('td', '', utcTime(a.since)));
    row.appendChild(el('td', 'num', a.value === null ? (a.reason ? 'unknown: ' + a.reason : '–') : fixed(a.value, 4)));
    row.appendChild(el('td', 'num', fixed(a.fireLevel, 4)));
    row.appendChild(el('td', 'num', fixed(a.clearLevel, 4)));
    body.appendChild(row);
  });
  const list = byId('recent-list');
  clear(list);
  const recent = state.alerts.recent.filter((t) => same(t.series, s)).slice(-10).reverse();
  byId('recent-none').hidden = recent.length > 0;
  recent.forEach((t) => {
    list.appendChild(el('li', '', utcTime(t.at) + ' · ' + t.rule + ': ' + t.from + ' → ' + t.to + (t.value === null ? '' : ' (reading ' + fixed(t.value, 4) + ')')));
  });
}

async function refreshDetail() {
  const key = state.selected;
  const s = key === null ? null : state.series.find((x) => keyOf(x) === key);
  byId('detail-none').hidden = s !== undefined && s !== null;
  byId('detail-body').hidden = !s;
  if (!s) {
    if (key !== null) setText(byId('detail-none'), 'That series is not watched here any more. Choose another on the left.');
    return;
  }
  const base = seriesPath(s);
  const detail = await getJson(base);
  renderWindows(detail);
  const [cdf, history] = await Promise.all([
    getJson(base + '/cdf?window=' + encodeURIComponent(state.window) + '&points=' + CDF_POINTS),
    getJson(base + '/history'),
  ]);
  if (state.selected !== key) return; // the choice changed while we waited: its own refresh draws it
  setText(byId('detail-title'), nameOf(detail));
  renderFacts(detail);
  cdfChart(cdf, detail.thresholds);
  historyChart(history);
  renderDrift(detail);
  renderLabels(detail);
  renderAlerts(s);
  state.lastDrawnKey = key;
  document.body.dataset.drawn = 'true';
}

// ---- refresh loop -----------------------------------------------------------------------------

function showStatus(text, stale) {
  const status = byId('status');
  setText(status, text);
  status.classList.toggle('stale', stale);
}

function defaultSelection() {
  const firing = state.alerts.alerts.find((a) => a.phase === 'firing');
  if (firing) return keyOf(firing);
  return state.series.length > 0 ? keyOf(state.series[0]) : null;
}

async function refresh() {
  clearTimeout(state.timer);
  const generation = ++state.generation;
  try {
    const [list, alerts] = await Promise.all([getJson('api/series'), getJson('api/alerts')]);
    state.series = list.series;
    state.alerts = alerts;
    if (state.selected === null) state.selected = fromHash() || defaultSelection();
    renderList();
    renderRaised();
    await refreshDetail();
    byId('problem').hidden = true;
    showStatus('updated ' + new Date().toISOString().slice(11, 19) + ' UTC · every ' + REFRESH_MS / 1000 + ' s', false);
  } catch (error) {
    showStatus('could not update: ' + (error && error.message ? error.message : String(error)) + '; trying again', true);
  } finally {
    if (!state.paused && generation === state.generation) state.timer = setTimeout(refresh, REFRESH_MS);
  }
}

function fromHash() {
  if (location.hash.length < 2) return null;
  try {
    const parsed = JSON.parse(decodeURIComponent(location.hash.slice(1)));
    return Array.isArray(parsed) && parsed.length === 3 && parsed.every((x) => typeof x === 'string') ? JSON.stringify(parsed) : null;
  } catch {
    return null;
  }
}

function select(key) {
  state.selected = key;
  window.history.replaceState(null, '', '#' + encodeURIComponent(key));
  for (const [k, row] of state.rows) row.button.setAttribute('aria-current', k === key ? 'true' : 'false');
  for (const slot of Object.keys(state.charts)) dropChart(slot, state.charts[slot].node);
  refresh();
}

function start() {
  byId('filter').addEventListener('input', renderList);
  byId('window').addEventListener('change', (e) => {
    state.window = e.target.value;
    refresh();
  });
  byId('pause').addEventListener('click', (e) => {
    state.paused = !state.paused;
    e.target.setAttribute('aria-pressed', String(state.paused));
    setText(e.target, state.paused ? 'Resume updates' : 'Pause updates');
    if (state.paused) {
      clearTimeout(state.timer);
      showStatus('paused', false);
    } else refresh();
  });
  let resizing = null;
  window.addEventListener('resize', () => {
    clearTimeout(resizing);
    resizing = setTimeout(() => {
      for (const c of Object.values(state.charts)) c.chart.setSize({ width: chartWidth(c.node), height: c.chart.height });
    }, 100);
  });
  refresh();
}

try {
  start();
} catch (error) {
  const problem = byId('problem');
  problem.textContent = 'The page could not start: ' + (error && error.message ? error.message : String(error));
  problem.hidden = false;
  throw error;
}
