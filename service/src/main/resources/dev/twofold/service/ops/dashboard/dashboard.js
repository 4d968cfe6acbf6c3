/* Twofold operator view: reads /dashboard/data, fills the tiles, draws five uPlot charts and the
   version table, and refreshes itself. Every series is told apart by its dash pattern or marker
   shape as well as its colour, and every state by a word and a symbol. */
(function () {
  'use strict';

  const DATA_URL = '/dashboard/data';
  const MIN_REFRESH_MS = 2000;
  const DASH = {
    solid: [],
    dashed: [10, 6],
    dotted: [2, 4],
    dashdot: [12, 4, 2, 4],
    longdash: [20, 6]
  };
  const STATE_SYMBOL = { ok: '\u2714', warn: '\u25B2', bad: '\u2716', none: '\u2013' };
  const OUTCOME = {
    promoted: { symbol: '\u25CF', word: 'promoted' },
    kept: { symbol: '\u25A1', word: 'kept, not promoted' },
    rejected: { symbol: '\u2716', word: 'rejected' },
    failed: { symbol: '\u25B2', word: 'failed' },
    running: { symbol: '\u25CC', word: 'running' }
  };

  const styles = getComputedStyle(document.documentElement);
  const colour = (name) => styles.getPropertyValue('--' + name).trim() || '#333';
  const charts = {};
  let last = null;

  // ---- formatting --------------------------------------------------------------------------

  function fixed(v, digits) {
    return v == null || !isFinite(v) ? '\u2013' : Number(v).toFixed(digits);
  }

  function percent(v, digits) {
    return v == null || !isFinite(v) ? '\u2013' : (100 * v).toFixed(digits) + ' %';
  }

  function duration(seconds) {
    if (seconds == null || !isFinite(seconds)) return '\u2013';
    const s = Math.max(0, Math.round(seconds));
    if (s < 90) return s + ' s';
    const m = Math.round(s / 60);
    if (m < 90) return m + ' min';
    const h = Math.floor(s / 3600);
    if (h < 48) return h + ' h ' + Math.round((s - h * 3600) / 60) + ' min';
    const d = Math.floor(s / 86400);
    return d + ' d ' + Math.round((s - d * 86400) / 3600) + ' h';
  }

  function clock(iso) {
    if (!iso) return '\u2013';
    const t = new Date(iso);
    const today = new Date();
    const sameDay = t.toDateString() === today.toDateString();
    const time = t.toLocaleTimeString([], { hour: '2-digit', minute: '2-digit', second: '2-digit' });
    return sameDay ? time : t.toLocaleDateString([], { month: 'short', day: 'numeric' }) + ' ' + time;
  }

  function seconds(v) {
    if (v == null || !isFinite(v)) return '\u2013';
    return (v < 1 ? Number(v.toPrecision(2)) : Math.round(v)) + ' s';
  }

  /** 24-hour local time of a Unix time in seconds, like 18:46 or 18:46:05. */
  function timeOfDay(epochSeconds, withSeconds) {
    const t = new Date(epochSeconds * 1000);
    const two = (n) => String(n).padStart(2, '0');
    return two(t.getHours()) + ':' + two(t.getMinutes()) + (withSeconds ? ':' + two(t.getSeconds()) : '');
  }

  function rate(v) {
    if (v == null || !isFinite(v)) return '\u2013';
    return v >= 100 ? v.toFixed(0) : v >= 10 ? v.toFixed(1) : v.toFixed(2);
  }

  // ---- tiles -------------------------------------------------------------------------------

  function tile(id, value, note, state) {
    const el = document.getElementById(id);
    el.classList.remove('ok', 'warn', 'bad');
    if (state && state !== 'none') el.classList.add(state);
    el.querySelector('.value').textContent = value;
    const noteEl = el.querySelector('.note');
    noteEl.textContent = '';
    if (state && state !== 'none') {
      const mark = document.createElement('span');
      mark.className = 'state';
      mark.textContent = STATE_SYMBOL[state] + ' ' + { ok: 'ok', warn: 'watch', bad: 'act' }[state] + ' \u00B7 ';
      noteEl.appendChild(mark);
    }
    noteEl.appendChild(document.createTextNode(note));
    el.dataset.state = state || 'none';
  }

  function recent(samples, seconds) {
    if (!samples.length) return [];
    const end = samples[samples.length - 1].at;
    return samples.filter((s) => s.at > end - seconds);
  }

  function windowTotals(samples, interval) {
    let requests = 0, server = 0, client = 0, slowest = null;
    for (const s of samples) {
      const n = s.requestsPerSecond * interval;
      requests += n;
      server += s.serverErrorsPerSecond * interval;
      client += s.clientErrorsPerSecond * interval;
      if (s.p99Ms != null && (slowest == null || s.p99Ms > slowest)) slowest = s.p99Ms;
    }
    return { requests, server, client, slowest };
  }

  function renderTiles(d) {
    const issues = [];
    const samples = d.traffic.samples;
    const interval = d.traffic.intervalSeconds;
    const latest = samples.length ? samples[samples.length - 1] : null;
    const minute = windowTotals(recent(samples, 60), interval);

    if (latest) {
      tile('tile-traffic', rate(latest.requestsPerSecond) + ' /s',
        'last ' + seconds(interval) + ' \u00B7 ' + Math.round(minute.requests) + ' in the last minute', 'none');
    } else {
      tile('tile-traffic', '\u2013', 'no sample yet', 'none');
    }

    const target = d.targets.p99Ms;
    if (minute.slowest != null) {
      const state = minute.slowest > target ? 'bad' : minute.slowest > 0.8 * target ? 'warn' : 'ok';
      if (state === 'bad') issues.push('p99 ' + fixed(minute.slowest, 1) + ' ms over the ' + target + ' ms target');
      tile('tile-latency', fixed(minute.slowest, minute.slowest < 10 ? 2 : 1) + ' ms',
        'worst in the last minute \u00B7 target \u2264 ' + target + ' ms', state);
    } else {
      tile('tile-latency', '\u2013', 'no API requests in the last minute \u00B7 target \u2264 ' + target + ' ms', 'none');
    }

    const limit = d.targets.serverErrorRate;
    if (minute.requests > 0) {
      const share = minute.server / minute.requests;
      const state = share > limit ? 'bad' : share > 0 ? 'warn' : 'ok';
      if (state === 'bad') issues.push(percent(share, 1) + ' server errors');
      tile('tile-errors', percent(share, 2), 'of API requests, last minute \u00B7 limit ' + percent(limit, 0)
        + ' \u00B7 ' + Math.round(minute.client) + ' client errors', state);
    } else {
      tile('tile-errors', '\u2013', 'no API requests in the last minute', 'none');
    }

    const m = d.model;
    if (m) {
      tile('tile-model', 'v' + m.id, 'rank ' + m.rank + ' \u00B7 ' + m.coupling + ' trust coupling \u00B7 '
        + m.items + ' recipes', 'ok');
      const ageLimit = d.targets.modelAgeLimitSeconds;
      const state = m.ageSeconds > ageLimit ? 'bad' : m.ageSeconds > 0.75 * ageLimit ? 'warn' : 'ok';
      if (state === 'bad') issues.push('live model older than ' + duration(ageLimit));
      tile('tile-age', duration(m.ageSeconds), 'trained ' + clock(m.trainedAt) + ' \u00B7 limit ' + duration(ageLimit),
        state);
      const live = findVersion(d, m.id);
      const gm = live && live.baselines.globalMeanRmse;
      tile('tile-rmse', fixed(m.rmse, 3), gm != null ? 'global mean ' + fixed(gm, 3) + ' \u00B7 '
        + fixed(100 * (m.rmse - gm) / gm, 0) + ' %' : 'baselines not recorded', 'none');
      const pop = live && live.baselines.mostPopularPrecision;
      document.querySelector('#tile-precision h2').textContent = 'Precision@' + (m.k || 'k');
      tile('tile-precision', fixed(m.precision, 3), pop != null ? 'most popular ' + fixed(pop, 3)
        : 'baselines not recorded', 'none');
      tile('tile-coverage', percent(m.coverage, 0), 'of recipes appear in held-out top-' + (m.k || 'k') + ' lists',
        'none');
    } else {
      issues.push('no model loaded');
      tile('tile-model', 'none', 'waiting for a first model to be promoted', 'bad');
      tile('tile-age', '\u2013', 'no model loaded', 'none');
      tile('tile-rmse', '\u2013', 'no model loaded', 'none');
      tile('tile-precision', '\u2013', 'no model loaded', 'none');
      tile('tile-coverage', '\u2013', 'no model loaded', 'none');
    }

    const versions = d.retrains.versions;
    if (versions.length) {
      const v = versions[versions.length - 1];
      const o = OUTCOME[v.outcome] || { symbol: '?', word: v.outcome };
      const state = v.outcome === 'failed' ? 'bad' : v.outcome === 'rejected' ? 'warn' : 'ok';
      if (state === 'bad') issues.push('last retrain failed');
      const since = d.retrains.lastSuccessAt ? (Date.parse(d.generatedAt) - Date.parse(d.retrains.lastSuccessAt)) / 1000 : null;
      const missing = since == null || since > d.targets.retrainMissingAfterSeconds;
      if (missing) issues.push('no successful retrain for ' + (since == null ? 'ever' : duration(since)));
      tile('tile-retrain', o.symbol + ' ' + o.word, 'v' + v.id + ' \u00B7 ' + (v.finishedAt ? 'ended ' + clock(v.finishedAt)
        + ' after ' + duration(v.durationSeconds) : 'started ' + clock(v.createdAt)), missing ? 'bad' : state);
    } else {
      tile('tile-retrain', 'none', d.retrains.problem || 'no retrain recorded yet', d.retrains.available ? 'warn' : 'none');
    }

    const verdict = document.getElementById('verdict');
    verdict.classList.remove('ok', 'warn', 'bad');
    const state = issues.length ? 'bad' : 'ok';
    verdict.classList.add(state);
    verdict.textContent = '';
    const sym = document.createElement('span');
    sym.className = 'symbol';
    sym.setAttribute('aria-hidden', 'true');
    sym.textContent = STATE_SYMBOL[state];
    verdict.appendChild(sym);
    verdict.appendChild(document.createTextNode(issues.length ? 'Needs attention: ' + issues.join('; ')
      : 'All clear: serving within targets'));
  }

  function findVersion(d, id) {
    return d.retrains.versions.find((v) => v.id === id) || null;
  }

  // ---- charts ------------------------------------------------------------------------------

  /** Canvas text and marks grow with the page's root font (larger on a wall screen). */
  function scale() {
    return (parseFloat(getComputedStyle(document.documentElement).fontSize) || 15) / 15;
  }

  function canvasFont(px, bold) {
    return (bold ? 'bold ' : '') + Math.round(px * scale() * devicePixelRatio) + 'px system-ui, sans-serif';
  }

  function axisFont() {
    return Math.round(12 * scale()) + 'px system-ui, sans-serif';
  }

  function legend(figure, specs) {
    const ul = figure.querySelector('.legend');
    ul.textContent = '';
    const NS = 'http://www.w3.org/2000/svg';
    for (const s of specs) {
      const li = document.createElement('li');
      const svg = document.createElementNS(NS, 'svg');
      svg.setAttribute('viewBox', '0 0 42 14');
      svg.setAttribute('aria-hidden', 'true');
      if (s.line !== false) {
        const line = document.createElementNS(NS, 'line');
        line.setAttribute('x1', '1'); line.setAttribute('x2', '41');
        line.setAttribute('y1', '7'); line.setAttribute('y2', '7');
        line.setAttribute('stroke', s.stroke);
        line.setAttribute('stroke-width', String(s.width || 2));
        if (DASH[s.dash || 'solid'].length) line.setAttribute('stroke-dasharray', DASH[s.dash].join(' '));
        svg.appendChild(line);
      }
      if (s.marker) {
        const g = document.createElementNS(NS, 'path');
        g.setAttribute('d', markerPath(s.marker, 21, 7, 5));
        g.setAttribute('stroke', s.stroke);
        g.setAttribute('stroke-width', '2');
        g.setAttribute('fill', s.hollow || s.marker === 'cross' ? 'none' : s.stroke);
        svg.appendChild(g);
      }
      li.appendChild(svg);
      li.appendChild(document.createTextNode(s.label));
      ul.appendChild(li);
    }
  }

  /** An SVG path for a marker shape centred on (x, y) with half-size r. */
  function markerPath(shape, x, y, r) {
    switch (shape) {
      case 'cross':
        return `M${x - r} ${y - r}L${x + r} ${y + r}M${x - r} ${y + r}L${x + r} ${y - r}`;
      case 'triangle':
        return `M${x} ${y - r}L${x + r} ${y + r}L${x - r} ${y + r}Z`;
      case 'square':
        return `M${x - r} ${y - r}H${x + r}V${y + r}H${x - r}Z`;
      case 'diamond':
        return `M${x} ${y - r - 1}L${x + r + 1} ${y}L${x} ${y + r + 1}L${x - r - 1} ${y}Z`;
      default:
        return `M${x - r} ${y}A${r} ${r} 0 1 0 ${x + r} ${y}A${r} ${r} 0 1 0 ${x - r} ${y}Z`;
    }
  }

  function drawMarker(ctx, shape, x, y, r, stroke, filled) {
    ctx.save();
    ctx.strokeStyle = stroke;
    ctx.fillStyle = stroke;
    ctx.lineWidth = Math.max(2, r / 2.5);
    ctx.setLineDash([]);
    ctx.stroke(new Path2D(markerPath(shape, x, y, r)));
    if (filled) ctx.fill(new Path2D(markerPath(shape, x, y, r)));
    ctx.restore();
  }

  /** Creates or updates a chart; rebuilds it when its series change. */
  function plot(id, chartKey, makeOptions, data, pointsDrawn, description) {
    const figure = document.getElementById(id);
    const box = figure.querySelector('.plot');
    let chart = charts[id];
    const key = chartKey + '@' + scale().toFixed(2);
    if (chart && chart.key !== key) {
      chart.u.destroy();
      chart = null;
    }
    const empty = box.querySelector('.empty');
    if (empty) empty.remove();
    const size = { width: Math.max(120, box.clientWidth), height: Math.max(120, box.clientHeight) };
    if (!chart) {
      const options = makeOptions();
      options.width = size.width;
      options.height = size.height;
      chart = { key, u: new uPlot(options, data, box) };
      charts[id] = chart;
    } else {
      chart.u.setData(data);
    }
    figure.dataset.points = String(pointsDrawn);
    box.setAttribute('aria-label', description);
    figure.querySelector('.summary').textContent = description;
  }

  function showEmpty(id, message) {
    const figure = document.getElementById(id);
    const box = figure.querySelector('.plot');
    if (charts[id]) {
      charts[id].u.destroy();
      delete charts[id];
    }
    let empty = box.querySelector('.empty');
    if (!empty) {
      empty = document.createElement('div');
      empty.className = 'empty';
      box.appendChild(empty);
    }
    empty.textContent = message;
    figure.dataset.points = '0';
    box.setAttribute('aria-label', message);
    figure.querySelector('.summary').textContent = '';
    figure.querySelector('.legend').textContent = '';
  }

  /** Width of a y axis: room for its longest tick label. */
  function axisSize(u, values) {
    if (!values) return Math.round(40 * scale());
    const longest = values.reduce((n, v) => Math.max(n, String(v).length), 0);
    return Math.round((longest * 7.5 + 18) * scale());
  }

  function baseOptions(xIsTime) {
    const font = axisFont();
    const grid = { stroke: colour('rule'), width: 1 };
    return {
      legend: { show: false },
      cursor: { drag: { x: false, y: false }, points: { size: 8 } },
      scales: { x: { time: xIsTime } },
      axes: [
        { font, stroke: colour('muted'), grid, ticks: grid },
        { font, stroke: colour('muted'), grid, ticks: grid, size: axisSize }
      ],
      series: [{}],
      hooks: { draw: [] }
    };
  }

  /** The two "by model version" charts: one line through promoted versions, rejected ones as crosses. */
  function versionChart(id, d, pick, baselines, digits, lowerIsBetter) {
    const versions = d.retrains.versions;
    const evaluated = versions.filter((v) => pick(v) != null);
    if (!evaluated.length) {
      showEmpty(id, versions.length ? 'No evaluated model versions yet' : (d.retrains.problem || 'No model versions yet'));
      return;
    }
    const xs = versions.map((v) => v.id);
    const kept = versions.map((v) => (v.outcome === 'promoted' || v.outcome === 'kept') ? pick(v) : null);
    const rejected = versions.map((v) => v.outcome === 'rejected' ? pick(v) : null);
    // a version's baselines are evaluated with its own settings and rows: draw them as reference
    // lines only under the versions the line goes through, not under rejected candidates
    const baseData = baselines.map((b) => versions.map((v) => (v.outcome === 'promoted' || v.outcome === 'kept')
      ? b.pick(v) : null));
    const liveId = d.model ? d.model.id : null;
    const specs = [
      { label: 'promoted and kept versions', stroke: colour('blueberry'), dash: 'solid', width: 2.5, marker: 'circle' },
      { label: 'rejected candidates', stroke: colour('paprika'), line: false, marker: 'cross' }
    ].concat(baselines.map((b) => ({ label: b.label, stroke: b.stroke, dash: b.dash, width: 1.75 })));
    if (versions.some((v) => v.outcome === 'failed')) {
      specs.push({ label: 'failed retrains (no figures)', stroke: colour('paprika'), line: false, marker: 'triangle', hollow: true });
    }
    if (liveId != null) {
      specs.push({ label: 'live model', stroke: colour('basil'), line: false, marker: 'diamond', hollow: true });
    }
    legend(document.getElementById(id), specs);

    const make = () => {
      const o = baseOptions(false);
      o.scales.x.range = (u, min, max) => [min - 0.5, max + 0.5];
      o.scales.y = { range: (u, min, max) => {
        const span = (max - min) || Math.abs(max) || 1;
        return [min - 0.12 * span, max + 0.15 * span];
      } };
      o.axes[0].splits = (u) => {
        const ids = u.data[0];
        const step = Math.max(1, Math.ceil(ids.length / Math.max(2, Math.floor(u.bbox.width / devicePixelRatio / 48))));
        return ids.filter((_, j) => j % step === 0);
      };
      o.axes[0].values = (u, splits) => splits.map((v) => 'v' + v);
      o.axes[0].size = Math.round(30 * scale());
      o.axes[1].values = (u, splits) => splits.map((v) => v.toFixed(digits));
      o.series.push({ label: specs[0].label, stroke: specs[0].stroke, width: 2.5 * scale(), spanGaps: true, points: { show: false } });
      o.series.push({ label: specs[1].label, stroke: specs[1].stroke, paths: () => null, points: { show: false } });
      for (const b of baselines) {
        o.series.push({ label: b.label, stroke: b.stroke, width: 1.75 * scale(), dash: DASH[b.dash].map((v) => v * scale()),
          spanGaps: true, points: { show: false } });
      }
      o.hooks.draw.push((u) => {
        const dpr = devicePixelRatio;
        const r = 5 * dpr * scale();
        const ids = u.data[0];
        for (let j = 0; j < ids.length; j++) {
          const x = u.valToPos(ids[j], 'x', true);
          if (u.data[1][j] != null) drawMarker(u.ctx, 'circle', x, u.valToPos(u.data[1][j], 'y', true), r * 0.8, specs[0].stroke, true);
          if (u.data[2][j] != null) drawMarker(u.ctx, 'cross', x, u.valToPos(u.data[2][j], 'y', true), r, specs[1].stroke, false);
          const v = u.__versions[j];
          if (v && v.outcome === 'failed') {
            drawMarker(u.ctx, 'triangle', x, u.bbox.top + u.bbox.height - r - 2 * dpr, r, colour('paprika'), false);
          }
          if (v && v.id === u.__liveId) {
            const value = u.data[1][j] != null ? u.data[1][j] : u.data[2][j];
            if (value != null) {
              const y = u.valToPos(value, 'y', true);
              drawMarker(u.ctx, 'diamond', x, y, r * 1.6, colour('basil'), false);
              u.ctx.save();
              u.ctx.fillStyle = colour('basil');
              u.ctx.font = canvasFont(11, true);
              u.ctx.textAlign = 'center';
              u.ctx.fillText('live', x, y - r * 2.4);
              u.ctx.restore();
            }
          }
        }
      });
      return o;
    };
    const key = id + ':' + baselines.length;
    const data = [xs, kept, rejected].concat(baseData);
    plot(id, key, make, data, evaluated.length, summaryOfVersions(d, pick, digits, lowerIsBetter, baselines));
    const u = charts[id].u;
    u.__versions = versions;
    u.__liveId = liveId;
    u.redraw(false, false);
  }

  function summaryOfVersions(d, pick, digits, lowerIsBetter, baselines) {
    const versions = d.retrains.versions;
    const rejected = versions.filter((v) => v.outcome === 'rejected').length;
    const failed = versions.filter((v) => v.outcome === 'failed').length;
    const live = d.model ? versions.find((v) => v.id === d.model.id) : null;
    const parts = [versions.length + ' versions'];
    if (live && pick(live) != null) {
      parts.push('live v' + live.id + ': ' + fixed(pick(live), digits));
      for (const b of baselines) {
        const value = b.pick(live);
        if (value != null) parts.push(b.label + ' ' + fixed(value, digits));
      }
    }
    parts.push(rejected + ' rejected (\u2716)');
    if (failed) parts.push(failed + ' failed (\u25B2)');
    parts.push(lowerIsBetter ? 'lower is better' : 'higher is better');
    return parts.join(' \u00B7 ');
  }

  function timeChart(id, d, series, digits, unit, extraDraw) {
    const samples = d.traffic.samples;
    if (samples.length < 1) {
      showEmpty(id, 'No traffic sampled yet; the first figures appear after ' + seconds(d.traffic.intervalSeconds));
      return;
    }
    legend(document.getElementById(id), series);
    const xs = samples.map((s) => s.at);
    const data = [xs].concat(series.map((s) => samples.map(s.pick)));
    const make = () => {
      const o = baseOptions(true);
      o.axes[0].size = Math.round(30 * scale());
      o.axes[0].values = (u, splits) => {
        const withSeconds = u.scales.x.max - u.scales.x.min <= 600;
        return splits.map((v) => timeOfDay(v, withSeconds));
      };
      o.axes[1].values = (u, splits) => splits.map((v) => v.toFixed(digits));
      o.scales.y = { range: (u, min, max) => [0, Math.max(max * 1.1, series.floor || 1)] };
      for (const s of series) {
        o.series.push({ label: s.label, stroke: s.stroke, width: (s.width || 2) * scale(),
          dash: DASH[s.dash || 'solid'].map((v) => v * scale()),
          spanGaps: false, points: { show: false } });
      }
      // a value with no neighbour draws no line, and every line's latest value deserves a mark:
      // draw the series' own marker shape there, so sparse series stay visible and distinct
      o.hooks.draw.push((u) => {
        const r = 4 * devicePixelRatio * scale();
        for (let i = 1; i < u.data.length; i++) {
          const ys = u.data[i];
          let last = -1;
          for (let j = ys.length - 1; j >= 0; j--) {
            if (ys[j] != null) { last = j; break; }
          }
          for (let j = 0; j < ys.length; j++) {
            if (ys[j] == null) continue;
            const alone = (j === 0 || ys[j - 1] == null) && (j === ys.length - 1 || ys[j + 1] == null);
            if (alone || j === last) {
              drawMarker(u.ctx, series[i - 1].marker || 'circle', u.valToPos(u.data[0][j], 'x', true),
                u.valToPos(ys[j], 'y', true), r, series[i - 1].stroke, true);
            }
          }
        }
      });
      if (extraDraw) o.hooks.draw.push(extraDraw);
      return o;
    };
    const drawn = data.slice(1).reduce((n, col) => n + col.filter((v) => v != null).length, 0);
    const key = id + ':' + series.map((s) => s.label).join('|');
    const busy = samples.filter((s) => s.requestsPerSecond > 0);
    const latest = busy.length ? busy[busy.length - 1] : samples[samples.length - 1];
    const description = series.map((s) => s.label + ' ' + fixed(s.pick(latest), digits) + (unit ? ' ' + unit : ''))
      .join(' \u00B7 ') + ' (' + (busy.length ? 'latest sample with traffic' : 'latest sample') + ', '
      + clock(new Date(latest.at * 1000).toISOString()) + ')';
    plot(id, key, make, data, drawn, description);
  }

  function renderCharts(d) {
    const grey = colour('pepper');
    versionChart('chart-rmse', d, (v) => v.rmse, [
      { label: 'global mean baseline', stroke: grey, dash: 'dotted', pick: (v) => v.baselines.globalMeanRmse },
      { label: 'biases-only baseline', stroke: grey, dash: 'dashed', pick: (v) => v.baselines.biasesOnlyRmse },
      { label: 'same model without trust', stroke: colour('plum'), dash: 'dashdot', pick: (v) => v.baselines.withoutTrustRmse }
    ], 3, true);
    versionChart('chart-precision', d, (v) => v.precision, [
      { label: 'most-popular baseline', stroke: grey, dash: 'dotted', pick: (v) => v.baselines.mostPopularPrecision },
      { label: 'same model without trust', stroke: colour('plum'), dash: 'dashdot', pick: (v) => v.baselines.withoutTrustPrecision }
    ], 3, false);

    timeChart('chart-traffic', d, [
      { label: 'answered', stroke: colour('blueberry'), dash: 'solid', marker: 'circle',
        pick: (s) => Math.max(0, s.requestsPerSecond - s.clientErrorsPerSecond - s.serverErrorsPerSecond) },
      { label: 'client errors (4xx)', stroke: colour('saffron'), dash: 'dashed', marker: 'square', pick: (s) => s.clientErrorsPerSecond },
      { label: 'server errors (5xx)', stroke: colour('paprika'), dash: 'dotted', width: 3, marker: 'triangle', pick: (s) => s.serverErrorsPerSecond }
    ], 1, '/s');

    const target = d.targets.p99Ms;
    const latency = [
      { label: 'p50', stroke: colour('basil'), dash: 'solid', marker: 'circle', pick: (s) => s.p50Ms },
      { label: 'p95', stroke: colour('saffron'), dash: 'dashed', marker: 'square', pick: (s) => s.p95Ms },
      { label: 'p99', stroke: colour('paprika'), dash: 'dotted', width: 3, marker: 'triangle', pick: (s) => s.p99Ms }
    ];
    latency.floor = target * 1.2;
    timeChart('chart-latency', d, latency, 1, 'ms', (u) => {
      const dpr = devicePixelRatio;
      const y = u.valToPos(target, 'y', true);
      const ctx = u.ctx;
      ctx.save();
      ctx.strokeStyle = colour('ink');
      ctx.lineWidth = 1.5 * dpr * scale();
      ctx.setLineDash(DASH.dashdot.map((v) => v * dpr));
      ctx.beginPath();
      ctx.moveTo(u.bbox.left, y);
      ctx.lineTo(u.bbox.left + u.bbox.width, y);
      ctx.stroke();
      ctx.setLineDash([]);
      ctx.fillStyle = colour('ink');
      ctx.font = canvasFont(11, false);
      ctx.textAlign = 'right';
      ctx.fillText('target ' + target + ' ms', u.bbox.left + u.bbox.width - 4 * dpr, y - 4 * dpr);
      ctx.restore();
    });
    // the target line is part of the chart's meaning: list it in the legend too
    const latencyLegend = document.querySelector('#chart-latency .legend');
    if (latencyLegend.children.length) {
      legend(document.getElementById('chart-latency'), latency.concat([
        { label: 'target ' + target + ' ms', stroke: colour('ink'), dash: 'dashdot', width: 1.5 }]));
    }

    const names = new Set();
    for (const s of d.traffic.samples) Object.keys(s.strategies).forEach((k) => names.add(k));
    const known = [
      { key: 'model', label: 'own factors (model)', stroke: colour('blueberry'), dash: 'solid', marker: 'circle' },
      { key: 'trust', label: 'from trusted cooks (trust)', stroke: colour('plum'), dash: 'dashed', marker: 'square' },
      { key: 'popular', label: 'most popular (popular)', stroke: colour('saffron'), dash: 'dotted', width: 3, marker: 'triangle' }
    ];
    const strategies = known.filter((k) => names.has(k.key));
    for (const n of [...names].sort()) {
      if (!known.some((k) => k.key === n)) strategies.push({ key: n, label: n, stroke: colour('pepper'), dash: 'longdash', marker: 'diamond' });
    }
    if (!strategies.length) {
      showEmpty('chart-strategies', d.traffic.samples.length ? 'No recommendations served yet'
        : 'No traffic sampled yet; the first figures appear after ' + seconds(d.traffic.intervalSeconds));
    } else {
      for (const s of strategies) s.pick = (sample) => sample.strategies[s.key] || 0;
      timeChart('chart-strategies', d, strategies, 1, '/s');
      const totals = strategies.map((s) => d.traffic.samples.reduce((n, sample) => n + s.pick(sample), 0));
      const all = totals.reduce((a, b) => a + b, 0);
      if (all > 0) {
        const hits = d.traffic.samples.reduce((n, sample) => n + (sample.keptListHitsPerSecond || 0), 0);
        const misses = d.traffic.samples.reduce((n, sample) => n + (sample.keptListMissesPerSecond || 0), 0);
        document.querySelector('#chart-strategies .summary').textContent = 'Share over the window: '
          + strategies.map((s, j) => s.key + ' ' + percent(totals[j] / all, 0)).join(' \u00B7 ')
          + (hits + misses > 0 ? '; answered from kept lists ' + percent(hits / (hits + misses), 0)
            + ' of those that could be' : '');
      }
    }
  }

  // ---- table -------------------------------------------------------------------------------

  function renderTable(d) {
    const problem = document.getElementById('history-problem');
    problem.hidden = !d.retrains.problem;
    problem.textContent = d.retrains.problem ? '\u2716 ' + d.retrains.problem : '';
    const body = document.querySelector('#versions tbody');
    body.textContent = '';
    const liveId = d.model ? d.model.id : null;
    const rows = d.retrains.versions.slice().reverse();
    for (const v of rows) {
      const tr = document.createElement('tr');
      if (v.id === liveId) tr.className = 'live';
      const o = OUTCOME[v.outcome] || { symbol: '?', word: v.outcome };
      const gm = v.baselines.globalMeanRmse;
      const cells = [
        ['v' + v.id + (v.id === liveId ? ' \u25C6 live' : ''), ''],
        [o.symbol + ' ' + o.word, 'outcome-' + v.outcome],
        [clock(v.createdAt), ''],
        [duration(v.durationSeconds), 'num'],
        [fixed(v.rmse, 3), 'num'],
        [fixed(v.precision, 3), 'num'],
        [percent(v.coverage, 0), 'num'],
        [v.rmse != null && gm ? fixed(100 * (v.rmse - gm) / gm, 1) + ' %' : '\u2013', 'num'],
        [v.reason || '', 'note']
      ];
      for (const [text, cls] of cells) {
        const td = document.createElement('td');
        td.textContent = text;
        if (cls) td.className = cls;
        tr.appendChild(td);
      }
      body.appendChild(tr);
    }
    if (!rows.length) {
      const tr = document.createElement('tr');
      const td = document.createElement('td');
      td.colSpan = 9;
      td.textContent = d.retrains.problem || 'No model versions recorded yet.';
      tr.appendChild(td);
      body.appendChild(tr);
    }
  }

  // ---- refresh loop ------------------------------------------------------------------------

  function render(d) {
    last = d;
    renderTiles(d);
    renderCharts(d);
    renderTable(d);
    document.getElementById('updated').textContent = 'updated ' + clock(d.generatedAt);
    document.getElementById('cadence').textContent = 'refreshes every ' + seconds(Math.max(MIN_REFRESH_MS / 1000, d.refreshSeconds));
    document.body.dataset.rendered = d.generatedAt;
  }

  function unreachable(reason) {
    const verdict = document.getElementById('verdict');
    verdict.classList.remove('ok', 'warn');
    verdict.classList.add('bad');
    verdict.textContent = STATE_SYMBOL.bad + ' Cannot read the figures (' + reason + '); showing the last ones and retrying';
  }

  async function refresh() {
    let delay = 5000;
    let d = null;
    try {
      const response = await fetch(DATA_URL, { cache: 'no-store', headers: { Accept: 'application/json' } });
      if (!response.ok) throw new Error('HTTP ' + response.status);
      d = await response.json();
      delay = Math.max(MIN_REFRESH_MS, 1000 * (d.refreshSeconds || 5));
    } catch (e) {
      unreachable(e.message || String(e));
    }
    setTimeout(refresh, delay);
    if (d) render(d); // a fault in drawing is a bug: let it reach the console
  }

  function resizeAll() {
    for (const id of Object.keys(charts)) {
      const box = document.getElementById(id).querySelector('.plot');
      charts[id].u.setSize({ width: Math.max(120, box.clientWidth), height: Math.max(120, box.clientHeight) });
    }
  }

  let resizeTimer = null;
  new ResizeObserver(() => {
    clearTimeout(resizeTimer);
    resizeTimer = setTimeout(() => { resizeAll(); if (last) renderTiles(last); }, 60);
  }).observe(document.querySelector('main'));

  refresh();
}());
