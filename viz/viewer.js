/*
 * tessera viewer: a 2-D slice of a table in the browser (d3, plain JS, no build step).
 * Data comes from window.TESSERA_DATA (static page) or from data.json (tessera view server).
 * Analysis aid only: it does not replace validation in simulation and hardware-in-the-loop.
 */
(function () {
  'use strict';
  var G = window.tesseraGeometry;
  // Same palette as src/plot/colour.ts: light hues, no red (holes) and no grey (infeasible).
  var PALETTE = ['#9cc3e6', '#f3cf7a', '#a8d5a2', '#c9b3e3', '#f5b48c', '#86d0c8', '#dcd97c', '#b4bce9', '#e9b7d2', '#bfe08f', '#9fd3ea', '#e6c39d'];
  var HOLE = '#e8112d', HOLE_DARK = '#6b0010';
  var fmt = d3.format('.4~g');
  var pct = d3.format('.1%');
  var W = 640, H = 560, M = { left: 64, right: 16, top: 16, bottom: 52 };

  var state = { pick: null, data: null, axes: [0, 1], fixed: [], colourBy: 'law', showGaps: true, redraws: 0, slice: null };
  var svg = d3.select('#map').attr('width', W).attr('height', H).attr('viewBox', '0 0 ' + W + ' ' + H);
  var sx = d3.scaleLinear(), sy = d3.scaleLinear();

  function colourFor(i) {
    if (i < PALETTE.length) return PALETTE[i];
    var c = d3.hsl(PALETTE[i % PALETTE.length]), turn = Math.floor(i / PALETTE.length);
    c.h = (c.h + 13 * turn) % 360;
    c.l = Math.max(0.45, Math.min(0.88, c.l + (turn % 2 ? -0.08 : 0.05) * Math.ceil(turn / 2)));
    return c.formatHex();
  }
  function lawKey(law) {
    function r(v) { return Math.abs(v) < 1e-12 ? '0' : v.toPrecision(9); }
    return law.F.map(function (row, i) { return row.map(r).join(',') + '|' + r(law.g[i]); }).join(';');
  }
  function affineText(F, g, names) {
    var t = [];
    F.forEach(function (c, k) {
      if (Math.abs(c) < 1e-12) return;
      var mag = fmt(Math.abs(c));
      t.push((t.length ? (c < 0 ? '− ' : '+ ') : c < 0 ? '−' : '') + (mag === '1' ? '' : mag + '·') + names[k]);
    });
    if (Math.abs(g) >= 1e-12 || !t.length) t.push((t.length ? (g < 0 ? '− ' : '+ ') : g < 0 ? '−' : '') + fmt(Math.abs(g)));
    return t.join(' ');
  }
  function lawText(t, r) {
    return r.law.F.map(function (row, i) { return (t.inputNames[i] || 'u' + (i + 1)) + '(0) = ' + affineText(row, r.law.g[i], t.thetaNames); }).join('; ');
  }
  function activeText(t, r) {
    return r.activeSet.length ? r.activeSet.map(function (k) { return t.constraints[k] || 'row ' + k; }).join(', ') : 'none (unconstrained optimum)';
  }

  /** One colour per key; distinct colours when the keys fit the palette, else DSatur on the key graph. */
  function colours(polys, keys) {
    var list = Array.from(new Set(keys)), idx = new Map(list.map(function (k, i) { return [k, i]; }));
    var kc = new Array(list.length);
    if (list.length <= PALETTE.length) {
      var w = list.map(function () { return 0; });
      keys.forEach(function (k, i) { w[idx.get(k)] += polys[i].area; });
      list.map(function (_, i) { return i; }).sort(function (a, b) { return w[b] - w[a] || a - b; }).forEach(function (k, rank) { kc[k] = rank; });
      return { colour: keys.map(function (k) { return kc[idx.get(k)]; }), distinct: true };
    }
    var R = state.slice.spec.rect, eps = 1e-6 * Math.max(1, R.x1 - R.x0, R.y1 - R.y0);
    var nb = G.adjacency(polys.map(function (p) { return p.polygon; }), eps);
    var gnb = list.map(function () { return new Set(); });
    nb.forEach(function (l, i) { l.forEach(function (j) { var a = idx.get(keys[i]), b = idx.get(keys[j]); if (a !== b) { gnb[a].add(b); gnb[b].add(a); } }); });
    var col = list.map(function () { return -1; }), sat = list.map(function () { return new Set(); }), used = PALETTE.map(function () { return 0; });
    for (var step = 0; step < list.length; step++) {
      var best = -1, bs = -1, bd = -1;
      for (var v = 0; v < list.length; v++) {
        if (col[v] >= 0) continue;
        var d = 0; gnb[v].forEach(function (u) { if (col[u] < 0) d++; });
        if (sat[v].size > bs || (sat[v].size === bs && d > bd)) { best = v; bs = sat[v].size; bd = d; }
      }
      var c = -1;
      for (var q = 0; q < PALETTE.length; q++) if (!sat[best].has(q) && (c < 0 || used[q] < used[c])) c = q;
      if (c < 0) { c = PALETTE.length; while (sat[best].has(c)) c++; }
      col[best] = c; used[c] = (used[c] || 0) + 1;
      gnb[best].forEach(function (u) { sat[u].add(c); });
    }
    return { colour: keys.map(function (k) { return col[idx.get(k)]; }), distinct: false };
  }

  function pathOf(p) {
    var ctx = d3.path();
    p.forEach(function (q, k) { if (k) ctx.lineTo(sx(q[0]), sy(q[1])); else ctx.moveTo(sx(q[0]), sy(q[1])); });
    ctx.closePath();
    return ctx.toString();
  }

  function setup(data) {
    state.data = data;
    var t = data.table;
    state.axes = [0, Math.min(1, t.dims.ntheta - 1)];
    state.fixed = t.box.lower.map(function (lo, k) { return (lo + t.box.upper[k]) / 2; });
    state.pick = null;
    clearPointer();
    d3.select('#title').text(t.name);
    d3.select('#subtitle').text(t.regions.length + ' regions · θ = [' + t.thetaNames.join(', ') + '] · u = [' + t.inputNames.join(', ') + ']' +
      (t.stats && t.stats.complete === false ? ' · INCOMPLETE TABLE (' + t.stats.stopReason + ')' : ''));
    d3.select('#subtitle').classed('warn', !!(t.stats && t.stats.complete === false));
    ['#axis-x', '#axis-y'].forEach(function (sel, a) {
      var s = d3.select(sel);
      s.selectAll('option').data(t.thetaNames).join('option').attr('value', function (_, i) { return i; }).text(function (d) { return d; });
      s.property('value', state.axes[a]);
    });
    buildSliders();
    render();
  }

  function buildSliders() {
    var t = state.data.table;
    var others = t.thetaNames.map(function (n, k) { return k; }).filter(function (k) { return state.axes.indexOf(k) < 0; });
    var rows = d3.select('#sliders').selectAll('div.slider').data(others, function (k) { return k; })
      .join(function (enter) {
        var d = enter.append('div').attr('class', 'slider');
        d.append('label').attr('for', function (k) { return 'fix-' + k; }).text(function (k) { return t.thetaNames[k]; });
        d.append('input').attr('type', 'range').attr('id', function (k) { return 'fix-' + k; }).attr('data-theta', function (k) { return k; });
        d.append('output').attr('id', function (k) { return 'fix-' + k + '-value'; });
        return d;
      });
    rows.select('input')
      .attr('min', function (k) { return t.box.lower[k]; })
      .attr('max', function (k) { return t.box.upper[k]; })
      .attr('step', function (k) { return (t.box.upper[k] - t.box.lower[k]) / 400; })
      .property('value', function (k) { return state.fixed[k]; })
      .on('input', function (ev, k) { state.fixed[k] = +this.value; d3.select('#fix-' + k + '-value').text(fmt(state.fixed[k])); render(); });
    rows.select('output').text(function (k) { return fmt(state.fixed[k]); });
    d3.select('#no-sliders').style('display', others.length ? 'none' : null);
  }

  function render() {
    var data = state.data, t = data.table, tol = data.tol;
    var spec = {
      axes: state.axes.slice(), fixed: state.fixed.slice(),
      rect: { x0: t.box.lower[state.axes[0]], x1: t.box.upper[state.axes[0]], y0: t.box.lower[state.axes[1]], y1: t.box.upper[state.axes[1]] },
    };
    var polys = G.sliceRegions(t.regions, spec, tol);
    var feasible = data.mpqp ? G.feasibleSlice(data.mpqp, spec, tol) : null;
    var gaps = G.sliceGaps(spec, polys, feasible, tol);
    state.slice = { spec: spec, polygons: polys, gaps: gaps, feasible: feasible };
    var keys = polys.map(function (p) {
      var r = t.regions[p.index];
      return state.colourBy === 'law' ? lawKey(r.law) : state.colourBy === 'active' ? r.activeSet.join(',') : String(r.id);
    });
    var col = colours(polys, keys);

    sx.domain([spec.rect.x0, spec.rect.x1]).range([M.left, W - M.right]);
    sy.domain([spec.rect.y0, spec.rect.y1]).range([H - M.bottom, M.top]);
    svg.select('g.x-axis').attr('transform', 'translate(0,' + (H - M.bottom) + ')').call(d3.axisBottom(sx).ticks(8));
    svg.select('g.y-axis').attr('transform', 'translate(' + M.left + ',0)').call(d3.axisLeft(sy).ticks(8));
    svg.select('text.x-label').attr('x', (M.left + W - M.right) / 2).attr('y', H - 12).text(t.thetaNames[spec.axes[0]]);
    svg.select('text.y-label').attr('transform', 'translate(16,' + (M.top + H - M.bottom) / 2 + ') rotate(-90)').text(t.thetaNames[spec.axes[1]]);
    svg.select('rect.frame').attr('x', M.left).attr('y', M.top).attr('width', W - M.left - M.right).attr('height', H - M.top - M.bottom);
    svg.select('#plot-clip rect').attr('x', M.left).attr('y', M.top).attr('width', W - M.left - M.right).attr('height', H - M.top - M.bottom);

    svg.select('g.regions').selectAll('path.region').data(polys, function (p) { return p.id; })
      .join('path').attr('class', 'region')
      .attr('data-region', function (p) { return p.id; })
      .attr('d', function (p) { return pathOf(p.polygon); })
      .attr('fill', function (p, k) { return colourFor(col.colour[k]); });

    var gl = svg.select('g.gaps').style('display', state.showGaps ? null : 'none');
    gl.selectAll('path.infeasible').data(gaps.infeasible.length ? [gaps.infeasible] : []).join('path').attr('class', 'infeasible')
      .attr('d', function (ps) { return ps.map(function (q) { return pathOf(G.ccw(q)); }).join(''); });
    gl.selectAll('path.hole').data(gaps.holeGroups).join('path').attr('class', 'hole')
      .attr('d', function (g) { return g.map(function (q) { return pathOf(G.ccw(gaps.holes[q])); }).join(''); });
    gl.selectAll('path.uncovered').data(feasible === null && gaps.uncovered.length ? [gaps.uncovered] : []).join('path').attr('class', 'uncovered')
      .attr('d', function (ps) { return ps.map(function (q) { return pathOf(G.ccw(q)); }).join(''); });
    var rings = gaps.holeGroups.map(function (g) {
      var big = g.reduce(function (a, q) { return G.area(gaps.holes[q]) > G.area(gaps.holes[a]) ? q : a; }, g[0]);
      var p = gaps.holes[big], cx = 0, cy = 0;
      p.forEach(function (q) { cx += q[0] / p.length; cy += q[1] / p.length; });
      return [cx, cy];
    });
    gl.selectAll('circle.hole-ring').data(rings).join('circle').attr('class', 'hole-ring')
      .attr('cx', function (c) { return sx(c[0]); }).attr('cy', function (c) { return sy(c[1]); }).attr('r', 13);

    var a = gaps.areas, nHoles = gaps.holeGroups.length;
    var sum = d3.select('#summary').html('');
    sum.append('span').text(polys.length + ' regions in slice · covered ' + pct(a.covered / a.rect) +
      (feasible === null ? ' · uncovered ' + pct(1 - a.covered / a.rect) + ' (not classified: no problem data) · ' : ' · infeasible ' + pct(a.infeasible / a.rect) + ' · '));
    sum.append('strong').attr('id', 'hole-count').attr('data-holes', nHoles).classed('holes', nHoles > 0)
      .text(feasible === null ? 'holes: unknown' : nHoles ? 'HOLES: ' + nHoles + ' (' + pct(a.holes / a.rect) + ' of slice)' : 'holes: none');

    var leg = d3.select('#legend').html('');
    if (col.distinct) {
      var seen = new Map();
      col.colour.forEach(function (c, k) { if (!seen.has(c)) seen.set(c, k); });
      Array.from(seen.entries()).sort(function (x, y) { return x[0] - y[0]; }).forEach(function (e) {
        var r = t.regions[polys[e[1]].index];
        var text = state.colourBy === 'law' ? lawText(t, r) : state.colourBy === 'active' ? activeText(t, r) : 'region ' + r.id;
        var row = leg.append('div').attr('class', 'key');
        row.append('span').attr('class', 'swatch').style('background', colourFor(e[0]));
        row.append('span').attr('title', text).text(text);
      });
    } else {
      leg.append('div').attr('class', 'note').text(new Set(keys).size + ' different ' + (state.colourBy === 'active' ? 'active sets' : state.colourBy + 's') +
        ': neighbours always differ in colour, colours repeat far apart — hover for the law.');
    }
    var g2 = leg.append('div').attr('class', 'key');
    g2.append('span').attr('class', 'swatch hatch');
    g2.append('span').text('infeasible: no input sequence meets the limits');
    var g3 = leg.append('div').attr('class', 'key');
    g3.append('span').attr('class', 'swatch hole');
    g3.append('span').text('HOLE (ringed): feasible, but no region — no law');
    showReadout();
    state.redraws++;
  }

  function eventTheta(ev) {
    var pt = d3.pointer(ev, svg.node());
    var th = state.fixed.slice();
    th[state.axes[0]] = sx.invert(pt[0]);
    th[state.axes[1]] = sy.invert(pt[1]);
    return th;
  }
  function describeAt(th) {
    var t = state.data.table, ri = G.locate(t.regions, th, state.data.tol.inside);
    return { index: ri, region: ri >= 0 ? t.regions[ri] : null };
  }

  svg.on('mousemove', function (ev) {
    if (!state.data) return;
    var t = state.data.table, th = eventTheta(ev), hit = describeAt(th), info = d3.select('#info');
    svg.selectAll('path.region').classed('hover', function (p) { return hit.region !== null && p.id === hit.region.id; });
    svg.selectAll('path.region.hover').raise();
    if (!hit.region) {
      var pt = [th[state.axes[0]], th[state.axes[1]]], g = state.slice.gaps, R = state.slice.spec.rect, e = 1e-9 * Math.max(1, R.x1 - R.x0, R.y1 - R.y0);
      var inHole = g.holes.some(function (q) { return G.convexContains(q, pt, e); });
      var inInf = !inHole && g.infeasible.some(function (q) { return G.convexContains(q, pt, e); });
      info.attr('data-region', -1).attr('data-gap', inHole ? 'hole' : inInf ? 'infeasible' : 'unclassified').html('');
      info.append('div').attr('class', 'head' + (inHole ? ' warn' : '')).text(inHole ? 'HOLE: no region, yet the problem is feasible here' : inInf ? 'infeasible here' : 'no region here');
      info.append('div').text(inHole ? 'the controller has no law at this θ: a solver gap, needs a fallback.' : inInf ? 'no input sequence meets the constraints at this θ.' : 'not classified (no problem data loaded).');
      return;
    }
    info.attr('data-region', hit.region.id).attr('data-gap', null).html('');
    info.append('div').attr('class', 'head').text('region ' + hit.region.id);
    info.append('div').text('active set: ' + activeText(t, hit.region));
    info.append('div').attr('class', 'law').text(lawText(t, hit.region));
  });
  svg.on('mouseleave', function () { svg.selectAll('path.region').classed('hover', false); });
  /** Readout of u(0) at a slice point; kept in step with the sliders (recomputed on every redraw). */
  function showReadout() {
    var ro = d3.select('#readout');
    if (!state.pick) {
      ro.attr('data-theta', null).attr('data-region', null).attr('data-u', null).html('').text('click the map to read u(0) there');
      svg.select('circle.pick').style('display', 'none');
      return;
    }
    var t = state.data.table, th = state.fixed.slice();
    th[state.axes[0]] = state.pick[0];
    th[state.axes[1]] = state.pick[1];
    var hit = describeAt(th);
    ro.html('').attr('data-theta', JSON.stringify(th));
    ro.append('div').attr('class', 'head').text('θ = (' + th.map(function (v, k) { return t.thetaNames[k] + ' ' + fmt(v); }).join(', ') + ')');
    if (hit.region) {
      var u = G.affine(hit.region.law, th);
      ro.attr('data-region', hit.region.id).attr('data-u', JSON.stringify(u));
      ro.append('div').attr('class', 'u').text(u.map(function (v, i) { return (t.inputNames[i] || 'u' + (i + 1)) + '(0) = ' + fmt(v); }).join(', ') + '   [region ' + hit.region.id + ']');
    } else {
      ro.attr('data-region', -1).attr('data-u', 'null');
      ro.append('div').attr('class', 'u warn').text('no region holds this θ: no law (fallback needed)');
    }
    svg.select('circle.pick').attr('cx', sx(state.pick[0])).attr('cy', sy(state.pick[1])).style('display', null);
  }
  svg.on('click', function (ev) {
    if (!state.data) return;
    var th = eventTheta(ev);
    state.pick = [th[state.axes[0]], th[state.axes[1]]];
    showReadout();
  });

  /** The pointer panel describes a point of the old slice after a change of axes: clear it. */
  function clearPointer() {
    svg.selectAll('path.region').classed('hover', false);
    d3.select('#info').attr('data-region', null).attr('data-gap', null).html('').text('hover a region for its id, active set and law');
  }

  function changeAxis(a, v) {
    var other = state.axes[1 - a];
    if (v === other) state.axes[1 - a] = state.axes[a];
    state.axes[a] = v;
    d3.select('#axis-x').property('value', state.axes[0]);
    d3.select('#axis-y').property('value', state.axes[1]);
    buildSliders();
    state.pick = null;
    clearPointer();
    render();
  }
  d3.select('#axis-x').on('change', function () { changeAxis(0, +this.value); });
  d3.select('#axis-y').on('change', function () { changeAxis(1, +this.value); });
  d3.select('#colour-by').on('change', function () { state.colourBy = this.value; render(); });
  d3.select('#show-gaps').on('change', function () { state.showGaps = this.checked; svg.select('g.gaps').style('display', state.showGaps ? null : 'none'); });
  d3.select('#file').on('change', function () {
    var f = this.files && this.files[0];
    if (!f) return;
    f.text().then(function (text) {
      var table = JSON.parse(text);
      if (table.format !== 'tessera-table') throw new Error(f.name + ': not a tessera table (format ' + JSON.stringify(table.format) + ')');
      // the server can rebuild the mpQP from the table's problem echo; a static page cannot
      return fetch('api/mpqp', { method: 'POST', body: text }).then(function (r) { return r.ok ? r.json() : null; }, function () { return null; })
        .then(function (mp) { setup({ table: table, mpqp: mp, tol: state.data ? state.data.tol : table.tolerances }); });
    }).catch(function (e) { d3.select('#summary').html('').append('strong').attr('class', 'holes').text(String(e.message || e)); });
  });

  window.tesseraViewer = {
    state: state,
    /** page coordinates of a slice point (for tests and scripted use) */
    project: function (x, y) {
      var r = svg.node().getBoundingClientRect(), k = r.width / W;
      return [r.left + sx(x) * k, r.top + sy(y) * k];
    },
    setFixed: function (k, v) { state.fixed[k] = v; d3.select('#fix-' + k).property('value', v); d3.select('#fix-' + k + '-value').text(fmt(v)); render(); },
  };

  if (window.TESSERA_DATA) setup(window.TESSERA_DATA);
  else fetch('data.json').then(function (r) { return r.json(); }).then(setup)
    .catch(function () { d3.select('#summary').text('no table loaded: use “Load table…”'); });
})();
