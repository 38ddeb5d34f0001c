/**
 * The script report.html runs: reads the report from its JSON block and draws, for the chosen series, the
 * low-margin share over time against the reference, the drift statistics over time, and the CDFs of the
 * kept windows against the reference, with uPlot (inlined beside it).
 *
 * Plain browser JavaScript kept as text, so it is inlined as it is. Every name in the report came from
 * events and is untrusted: it reaches the page only through textContent (and option text), never as
 * markup. Colours are the Okabe–Ito palette (safe for the common colour-vision deficiencies), and each
 * curve also differs by dash or width, so no chart relies on red against green.
 *
 * When everything is drawn, <body> gets data-drawn="true" (tests wait for it); a failure to draw shows in
 * the page and as a console error, never silently.
 */
export const PAGE_SCRIPT = String.raw`
(function () {
  'use strict';
  var report = JSON.parse(document.getElementById('report-data').textContent);
  var THRESHOLD_COLOURS = ['#0072B2', '#E69F00', '#CC79A7', '#009E73', '#56B4E9', '#D55E00'];
  var DRIFT = { ks: '#0072B2', wasserstein: '#E69F00', psi: '#CC79A7' };
  var PICKS = { first: '#56B4E9', last: '#D55E00', 'worst-ks': '#CC79A7' };
  var PICK_DASH = { first: [2, 3], last: [], 'worst-ks': [8, 4] };
  var REFERENCE_COLOUR = '#3b3f45';
  var charts = [];

  function el(tag, className, text) {
    var node = document.createElement(tag);
    if (className) node.className = className;
    if (text !== undefined && text !== null) node.textContent = String(text);
    return node;
  }
  function byId(id) { return document.getElementById(id); }
  function clear(node) { while (node.firstChild) node.removeChild(node.firstChild); }
  function fixed(x, digits) { return x === null || x === undefined ? '–' : Number(x).toFixed(digits); }
  function pct(x) { return x === null || x === undefined ? '–' : (100 * x).toFixed(1) + '%'; }
  function when(iso) { return iso.replace('T', ' ').replace(/:00\.000Z$/, ' UTC').replace(/\.\d{3}Z$/, ' UTC'); }
  function seriesKey(e) { return JSON.stringify([e.model, e.version, e.segment]); }
  function seriesName(s) { return s.model + ' @ ' + s.version + ' · ' + s.segment; }
  function seconds(iso) { return Date.parse(iso) / 1000; }

  // One entry per series, in the report's order, with its windows in time order.
  var series = [];
  var byKey = new Map();
  report.windows.forEach(function (e) {
    var key = seriesKey(e);
    var s = byKey.get(key);
    if (!s) {
      s = { key: key, model: e.model, version: e.version, segment: e.segment, windows: [] };
      byKey.set(key, s);
      series.push(s);
    }
    s.windows.push(e);
  });
  series.forEach(function (s) {
    s.events = s.windows.reduce(function (n, e) { return n + e.count; }, 0);
    s.peakKs = s.windows.reduce(function (m, e) { return e.ks && e.ks.statistic > m ? e.ks.statistic : m; }, -1);
    s.thresholds = [];
    s.windows.forEach(function (e) { e.lowMargin.forEach(function (l) { if (s.thresholds.indexOf(l.threshold) < 0) s.thresholds.push(l.threshold); }); });
    s.thresholds.sort(function (a, b) { return a - b; });
    s.cdfs = report.cdfs.series.find(function (c) { return seriesKey(c) === s.key; }) || null;
  });

  function fillFacts() {
    var t = report.totals;
    var rejected = Object.keys(t.rejected).reduce(function (n, k) { return n + t.rejected[k]; }, 0);
    var facts = [
      ['Source', report.source],
      ['Window', report.window],
      ['Written', when(report.createdAt)],
      ['Events', t.events + ' of ' + t.lines + ' lines'],
      ['Rejected', String(rejected)],
      ['Series', String(series.length)],
    ];
    var list = byId('facts');
    facts.forEach(function (f) {
      list.appendChild(el('dt', '', f[0]));
      list.appendChild(el('dd', '', f[1]));
    });
  }

  function peakShare(s, threshold) {
    var best = null;
    s.windows.forEach(function (e) {
      var l = e.lowMargin.find(function (x) { return x.threshold === threshold; });
      if (l && l.live !== null && (best === null || l.live > best.live)) best = l;
    });
    return best;
  }

  function fillOverview(select) {
    var body = byId('overview-body');
    series.forEach(function (s, i) {
      var row = el('tr');
      var name = el('td', 'name');
      var button = el('button', 'link', seriesName(s));
      button.type = 'button';
      button.addEventListener('click', function () { select.value = String(i); show(i); byId('series').scrollIntoView(); });
      name.appendChild(button);
      row.appendChild(name);
      row.appendChild(el('td', 'num', s.windows.length));
      row.appendChild(el('td', 'num', s.events));
      var theta = s.thresholds[s.thresholds.length - 1];
      var peak = theta === undefined ? null : peakShare(s, theta);
      row.appendChild(el('td', 'num', peak ? pct(peak.live) + ' (θ ' + theta + ')' : '–'));
      row.appendChild(el('td', 'num', peak && peak.reference !== null ? pct(peak.reference) : '–'));
      row.appendChild(el('td', 'num', s.peakKs >= 0 ? fixed(s.peakKs, 3) : '–'));
      body.appendChild(row);
    });
  }

  function key(list, items) {
    clear(list);
    items.forEach(function (item) {
      var li = el('li');
      var swatch = el('span', 'swatch');
      swatch.style.borderTopColor = item.colour;
      swatch.style.borderTopStyle = item.style || 'solid';
      swatch.style.borderTopWidth = (item.width || 3) + 'px';
      swatch.dataset.colour = item.colour;
      li.appendChild(swatch);
      li.appendChild(el('span', '', item.label));
      list.appendChild(li);
    });
  }

  function chartWidth(node) { return Math.max(320, node.clientWidth); }

  function makeChart(node, opts, data) {
    clear(node);
    opts.width = chartWidth(node);
    opts.height = opts.height || 260;
    opts.legend = { show: false };
    opts.cursor = opts.cursor || { drag: { x: false, y: false } };
    var chart = new uPlot(opts, data, node);
    chart.__node = node;
    charts.push(chart);
    return chart;
  }

  var utc = function (ts) { return uPlot.tzDate(new Date(ts * 1e3), 'Etc/UTC'); };
  var axisStyle = { stroke: '#4a4f55', grid: { stroke: '#e3e1da', width: 1 }, ticks: { stroke: '#d5d2c8', width: 1 } };
  function axis(extra) { return Object.assign({}, axisStyle, extra); }
  // 24-hour UTC times, with the date under the first time of each day (or the date alone for whole days).
  function timeValues(u, splits) {
    var wholeDays = splits.every(function (t) { return t % 86400 === 0; });
    var previous = null;
    return splits.map(function (t) {
      var iso = new Date(t * 1000).toISOString();
      var day = iso.slice(0, 10);
      var text = wholeDays ? day : day !== previous ? iso.slice(11, 16) + '\n' + day : iso.slice(11, 16);
      previous = day;
      return text;
    });
  }
  function timeAxis() { return axis({ label: 'window start (UTC)', values: timeValues, space: 60 }); }
  // A single window (e.g. --window total) would stretch the time axis over years: give it its own length.
  function timeScale(s) {
    var first = s.windows[0];
    var pad = Math.max(60, (Date.parse(first.end) - Date.parse(first.start)) / 1000);
    var at = seconds(first.start);
    return s.windows.length === 1 ? { time: true, auto: false, range: [at - pad, at + pad] } : { time: true };
  }
  function fromZero(u, min, max) { return [0, Math.max(max * 1.1, 0.02)]; }

  function lowMarginChart(s) {
    var node = byId('chart-low-margin');
    var xs = s.windows.map(function (e) { return seconds(e.start); });
    var data = [xs];
    var opts = { scales: { x: timeScale(s), y: { range: fromZero } }, tzDate: utc, series: [{}], bands: [], axes: [timeAxis(), axis({ label: 'share below θ', values: function (u, v) { return v.map(function (x) { return (100 * x).toFixed(0) + '%'; }); } })] };
    var items = [];
    var few = xs.length < 30;
    s.thresholds.forEach(function (theta, i) {
      var colour = THRESHOLD_COLOURS[i % THRESHOLD_COLOURS.length];
      var at = function (e) { return e.lowMargin.find(function (l) { return l.threshold === theta; }); };
      var live = s.windows.map(function (e) { var l = at(e); return l ? l.live : null; });
      var lower = s.windows.map(function (e) { var l = at(e); return l && l.live !== null ? l.interval[0] : null; });
      var upper = s.windows.map(function (e) { var l = at(e); return l && l.live !== null ? l.interval[1] : null; });
      var reference = s.windows.map(function (e) { var l = at(e); return l ? l.reference : null; });
      var base = data.length;
      data.push(upper, lower, live, reference);
      opts.series.push(
        { label: 'θ ' + theta + ' upper', stroke: colour, width: 0, points: { show: false } },
        { label: 'θ ' + theta + ' lower', stroke: colour, width: 0, points: { show: false } },
        { label: 'θ ' + theta, stroke: colour, width: 2, points: { show: few, size: 5, fill: colour } },
        { label: 'reference θ ' + theta, stroke: colour, width: 1.5, dash: [6, 4], points: { show: false } }
      );
      opts.bands.push({ series: [base, base + 1], fill: colour + '2e' });
      items.push({ colour: colour, label: 'share below θ = ' + theta + ' (shaded: Wilson 95% interval)' });
      if (reference.some(function (r) { return r !== null; })) items.push({ colour: colour, style: 'dashed', width: 2, label: 'reference share below θ = ' + theta });
    });
    key(byId('key-low-margin'), items);
    makeChart(node, opts, data);
  }

  function driftChart(s) {
    var node = byId('chart-drift');
    var note = byId('note-drift');
    var withDrift = s.windows.filter(function (e) { return e.ks !== null; });
    if (withDrift.length === 0) {
      clear(node);
      clear(byId('key-drift'));
      note.textContent = 'No drift figures for this series: it has no reference to compare with (or every window was empty).';
      note.hidden = false;
      return;
    }
    note.hidden = true;
    var xs = s.windows.map(function (e) { return seconds(e.start); });
    var few = xs.length < 30;
    var psiBands = function (u) {
      // 0.1 and 0.25: the usual rule-of-thumb PSI bands (common practice), dotted on the PSI axis.
      var ctx = u.ctx;
      ctx.save();
      ctx.strokeStyle = DRIFT.psi;
      ctx.globalAlpha = 0.55;
      ctx.setLineDash([2, 4]);
      ctx.lineWidth = 1;
      [0.1, 0.25].forEach(function (level) {
        if (level > u.scales.psi.max) return;
        var y = Math.round(u.valToPos(level, 'psi', true)) + 0.5;
        ctx.beginPath();
        ctx.moveTo(u.bbox.left, y);
        ctx.lineTo(u.bbox.left + u.bbox.width, y);
        ctx.stroke();
      });
      ctx.restore();
    };
    var opts = {
      scales: { x: timeScale(s), y: { range: fromZero }, psi: { range: fromZero } },
      tzDate: utc,
      series: [
        {},
        { label: 'KS D', stroke: DRIFT.ks, width: 2, points: { show: few, size: 5, fill: DRIFT.ks } },
        { label: 'Wasserstein-1', stroke: DRIFT.wasserstein, width: 2, dash: [8, 4], points: { show: few, size: 5, fill: DRIFT.wasserstein } },
        { label: 'PSI', stroke: DRIFT.psi, width: 2, dash: [2, 3], scale: 'psi', points: { show: few, size: 5, fill: DRIFT.psi } },
      ],
      axes: [
        timeAxis(),
        axis({ label: 'KS D, Wasserstein-1' }),
        axis({ scale: 'psi', side: 1, label: 'PSI', grid: { show: false } }),
      ],
      hooks: { draw: [psiBands] },
    };
    var data = [
      xs,
      s.windows.map(function (e) { return e.ks ? e.ks.statistic : null; }),
      s.windows.map(function (e) { return e.wasserstein; }),
      s.windows.map(function (e) { return e.psi; }),
    ];
    key(byId('key-drift'), [
      { colour: DRIFT.ks, label: 'KS D (left axis)' },
      { colour: DRIFT.wasserstein, style: 'dashed', label: 'Wasserstein-1 (left axis)' },
      { colour: DRIFT.psi, style: 'dotted', label: 'PSI (right axis; dotted guides at 0.1 and 0.25)' },
    ]);
    makeChart(node, opts, data);
  }

  function cdfChart(s) {
    var node = byId('chart-cdf');
    var note = byId('note-cdf');
    var c = s.cdfs;
    if (!c || c.windows.length === 0) {
      clear(node);
      clear(byId('key-cdf'));
      note.textContent = 'No distribution kept for this series.';
      note.hidden = false;
      return;
    }
    note.hidden = c.reference !== null;
    if (c.reference === null) note.textContent = 'This series has no reference: only its own windows are drawn.';
    var thresholds = s.thresholds;
    var guides = function (u) {
      var ctx = u.ctx;
      ctx.save();
      ctx.strokeStyle = '#9a968b';
      ctx.setLineDash([1, 3]);
      ctx.lineWidth = 1;
      ctx.fillStyle = '#6b675e';
      ctx.font = '11px system-ui, sans-serif';
      thresholds.forEach(function (theta) {
        var x = Math.round(u.valToPos(theta, 'x', true)) + 0.5;
        ctx.beginPath();
        ctx.moveTo(x, u.bbox.top);
        ctx.lineTo(x, u.bbox.top + u.bbox.height);
        ctx.stroke();
        ctx.fillText('θ ' + theta, x + 4, u.bbox.top + 12);
      });
      ctx.restore();
    };
    var opts = {
      scales: { x: { time: false, range: [0, 1] }, y: { range: [0, 1] } },
      series: [{}],
      axes: [axis({ label: 'confidence margin' }), axis({ label: 'share at or below' })],
      hooks: { draw: [guides] },
    };
    var data = [report.cdfs.margins];
    var items = [];
    if (c.reference !== null) {
      opts.series.push({ label: 'reference', stroke: REFERENCE_COLOUR, width: 3.5 });
      data.push(c.reference);
      items.push({ colour: REFERENCE_COLOUR, width: 4, label: 'reference' });
    }
    c.windows.forEach(function (w) {
      var pick = w.picked.indexOf('worst-ks') >= 0 ? 'worst-ks' : w.picked[w.picked.length - 1];
      var colour = PICKS[pick];
      var names = w.picked.map(function (p) { return p === 'worst-ks' ? 'largest KS D' : p; }).join(', ');
      var label = names + ': ' + when(w.start) + ' (' + w.count + ' events' + (w.ks !== null ? ', KS D ' + fixed(w.ks, 3) : '') + ')';
      opts.series.push({ label: label, stroke: colour, width: 2, dash: PICK_DASH[pick] });
      data.push(w.cdf);
      items.push({ colour: colour, style: pick === 'first' ? 'dotted' : pick === 'worst-ks' ? 'dashed' : 'solid', label: label });
    });
    key(byId('key-cdf'), items);
    makeChart(node, opts, data);
  }

  function windowTable(s) {
    var head = byId('windows-head');
    var body = byId('windows-body');
    clear(head);
    clear(body);
    var cols = ['start (UTC)', 'events'];
    s.thresholds.forEach(function (t) { cols.push('share < ' + t, 'reference'); });
    cols.push('KS D', 'KS p', 'PSI', 'Wasserstein-1', 'alerts');
    var tr = el('tr');
    cols.forEach(function (c) { tr.appendChild(el('th', '', c)); });
    head.appendChild(tr);
    s.windows.forEach(function (e) {
      var row = el('tr');
      row.appendChild(el('td', '', when(e.start)));
      row.appendChild(el('td', 'num', e.count));
      s.thresholds.forEach(function (t) {
        var l = e.lowMargin.find(function (x) { return x.threshold === t; });
        row.appendChild(el('td', 'num', l && l.live !== null ? pct(l.live) + ' [' + pct(l.interval[0]) + ', ' + pct(l.interval[1]) + ']' : '–'));
        row.appendChild(el('td', 'num', l ? pct(l.reference) : '–'));
      });
      row.appendChild(el('td', 'num', e.ks ? fixed(e.ks.statistic, 3) : '–'));
      row.appendChild(el('td', 'num', e.ks && e.ks.pValue !== null ? Number(e.ks.pValue).toPrecision(2) : '–'));
      row.appendChild(el('td', 'num', fixed(e.psi, 3)));
      row.appendChild(el('td', 'num', fixed(e.wasserstein, 3)));
      row.appendChild(el('td', '', e.alerts.map(function (a) { return a.rule + ' (' + a.state + ')'; }).join(', ')));
      body.appendChild(row);
    });
  }

  function show(index) {
    var s = series[index];
    charts.forEach(function (c) { c.destroy(); });
    charts = [];
    byId('series-title').textContent = seriesName(s);
    byId('series-facts').textContent = s.windows.length + ' window' + (s.windows.length === 1 ? '' : 's') + ', ' + s.events + ' events, ' +
      (s.windows.some(function (e) { return e.reference === 'loaded'; }) ? 'compared with a reference' : 'no reference');
    lowMarginChart(s);
    driftChart(s);
    cdfChart(s);
    windowTable(s);
  }

  function start() {
    fillFacts();
    var select = byId('series-select');
    if (series.length === 0) {
      byId('series').hidden = true;
      byId('empty').hidden = false;
      document.body.dataset.drawn = 'true';
      return;
    }
    series.forEach(function (s, i) {
      var option = el('option', '', seriesName(s));
      option.value = String(i);
      select.appendChild(option);
    });
    // Open on the series that moved furthest from its reference (largest KS D), else the first.
    var first = series.reduce(function (best, s, i) { return s.peakKs > series[best].peakKs ? i : best; }, 0);
    select.value = String(first);
    select.addEventListener('change', function () { show(Number(select.value)); });
    fillOverview(select);
    show(first);
    var resizing = null;
    window.addEventListener('resize', function () {
      clearTimeout(resizing);
      resizing = setTimeout(function () { charts.forEach(function (c) { c.setSize({ width: chartWidth(c.__node), height: c.height }); }); }, 100);
    });
    document.body.dataset.drawn = 'true';
  }

  try {
    start();
  } catch (error) {
    var problem = byId('problem');
    problem.textContent = 'The charts could not be drawn: ' + (error && error.message ? error.message : String(error));
    problem.hidden = false;
    throw error;
  }
})();
`;
