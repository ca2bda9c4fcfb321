/*
 * tessera viewer: DOM code only. Every computation (the slice, its feasible set and gaps, colours,
 * heat layers, closed-loop runs, point location, the law text) comes from the engine's own core
 * (src/core.ts), which `npm run build` bundles with this file and d3 into dist/viz/viewer.js.
 * Data: window.TESSERA_DATA (static page) or data.json (tessera view server): { table, problem }.
 * Analysis aid only: it does not replace validation in simulation and hardware-in-the-loop.
 */
import { axisBottom, axisLeft, format, line, path as d3path, pointer, scaleLinear, scaleSequential, select, zoom, zoomIdentity } from 'd3';
import {
  activeSetText,
  analyseSlice,
  applyAffine,
  area,
  ccw,
  centroid,
  convexContains,
  evaluateTable,
  heatGrid,
  heatInterpolator,
  heatLayer,
  isMergedTable,
  lawText,
  liftPoint,
  locateSequential,
  makeSliceSpec,
  paletteColour,
  parseProblem,
  parseTableJson,
  simulateClosedLoop,
  sliceColours,
  tableProblem,
} from '../src/core.js';

const fmt = format('.4~g');
const pct = format('.1%');
const W = 640;
const H = 560;
const M = { left: 64, right: 16, top: 16, bottom: 52 };
const HEAT_CELLS = 120;

const state = {
  data: null,
  /** { loaded, mpqp } of the table's problem, or null when it cannot be rebuilt */
  problem: null,
  problemError: null,
  axes: [0, 1],
  fixed: [],
  colourBy: 'law',
  heat: 'none',
  showGaps: true,
  showIds: false,
  trajMode: false,
  steps: 40,
  trajectories: [],
  pick: null,
  slice: null,
  colours: null,
  grid: null,
  transform: zoomIdentity,
  redraws: 0,
};

const svg = select('#map').attr('width', W).attr('height', H).attr('viewBox', `0 0 ${W} ${H}`);
const sx = scaleLinear();
const sy = scaleLinear();
/** the scales after zoom/pan */
const zx = () => state.transform.rescaleX(sx);
const zy = () => state.transform.rescaleY(sy);

function pathOf(p, x, y) {
  const ctx = d3path();
  p.forEach((q, k) => (k ? ctx.lineTo(x(q[0]), y(q[1])) : ctx.moveTo(x(q[0]), y(q[1]))));
  ctx.closePath();
  return ctx.toString();
}

function table() {
  return state.data.table;
}

function setup(data) {
  state.data = data;
  const t = data.table;
  state.problem = null;
  state.problemError = null;
  try {
    // the mpQP is rebuilt here, by the same code as in Node, from the problem the table echoes (or a separate one)
    const problem = data.problem ? parseProblem(data.problem, data.problemFile || 'problem') : undefined;
    state.problem = tableProblem(t, { tableFile: t.name, problem, problemFile: data.problemFile });
  } catch (e) {
    state.problemError = String((e && e.message) || e);
  }
  state.axes = [0, Math.min(1, t.dims.ntheta - 1)];
  state.fixed = t.box.lower.map((lo, k) => (lo + t.box.upper[k]) / 2);
  state.pick = null;
  state.trajectories = [];
  state.heat = 'none';
  state.transform = zoomIdentity;
  svg.call(zoomer.transform, zoomIdentity);
  select('#title').text(t.name);
  select('#subtitle')
    .text(
      `${t.regions.length} regions · θ = [${t.thetaNames.join(', ')}] · u = [${t.inputNames.join(', ')}]` +
        (t.stats && t.stats.complete === false ? ` · INCOMPLETE TABLE (${t.stats.stopReason})` : '') +
        (state.problemError ? ` · feasibility unknown: ${state.problemError}` : ''),
    )
    .classed('warn', !!(t.stats && t.stats.complete === false) || !!state.problemError);
  ['#axis-x', '#axis-y'].forEach((sel, a) => {
    const s = select(sel);
    s.selectAll('option').data(t.thetaNames).join('option').attr('value', (_, i) => i).text((d) => d);
    s.property('value', state.axes[a]);
  });
  const heatOptions = [{ v: 'none', label: 'none' }, ...t.inputNames.map((n) => ({ v: n, label: `${n}(0)` })), { v: 'cost', label: 'optimal cost J*(θ)' }];
  select('#heat')
    .selectAll('option')
    .data(heatOptions)
    .join('option')
    .attr('value', (d) => d.v)
    .text((d) => d.label)
    .property('disabled', (d) => d.v === 'cost' && (isMergedTable(t) || t.lean === true));
  select('#heat').property('value', 'none');
  select('#traj-mode').property('disabled', !state.problem || !state.problem.loaded.model);
  buildSliders();
  resetInfo();
  compute();
}

function buildSliders() {
  const t = table();
  const others = t.thetaNames.map((n, k) => k).filter((k) => state.axes.indexOf(k) < 0);
  const rows = select('#sliders')
    .selectAll('div.slider')
    .data(others, (k) => k)
    .join((enter) => {
      const d = enter.append('div').attr('class', 'slider');
      d.append('label').attr('for', (k) => `fix-${k}`).text((k) => t.thetaNames[k]);
      d.append('input').attr('type', 'range').attr('id', (k) => `fix-${k}`).attr('data-theta', (k) => k);
      d.append('output').attr('id', (k) => `fix-${k}-value`);
      return d;
    });
  rows
    .select('input')
    .attr('min', (k) => t.box.lower[k])
    .attr('max', (k) => t.box.upper[k])
    .attr('step', (k) => (t.box.upper[k] - t.box.lower[k]) / 400)
    .property('value', (k) => state.fixed[k])
    .on('input', function (ev, k) {
      setFixed(k, +this.value);
    });
  rows.select('output').text((k) => fmt(state.fixed[k]));
  select('#no-sliders').style('display', others.length ? 'none' : null);
}

function setFixed(k, v) {
  // the slider is the θ entry itself: a value that is not a finite number in the box is refused
  const t = table();
  if (!Number.isFinite(v) || v < t.box.lower[k] || v > t.box.upper[k]) return false;
  state.fixed[k] = v;
  select(`#fix-${k}`).property('value', v);
  select(`#fix-${k}-value`).text(fmt(v));
  compute();
  return true;
}

/** The engine's slice of the current plane (polygons, feasible set, gaps) and everything derived from it. */
function compute() {
  const t = table();
  const spec = makeSliceSpec(t.box, state.axes.slice(), new Map(state.fixed.map((v, k) => [k, v])));
  if (state.problem) state.slice = analyseSlice(t, state.problem.mpqp, spec);
  else {
    // no problem data: the slice without the feasibility split (uncovered parts stay unclassified)
    const s = analyseSlice(t, { nc: 0, nz: 0, ntheta: t.dims.ntheta, G: new Float64Array(0), w: new Float64Array(0), E: new Float64Array(0) }, spec);
    state.slice = { ...s, feasible: null, gaps: { ...s.gaps, holes: [], infeasible: [], holeGroups: [], areas: { ...s.gaps.areas, holes: 0, infeasible: 0 } } };
  }
  state.colours = sliceColours(t, state.slice, state.colourBy);
  computeHeat();
  draw();
  legend();
  summary();
  state.redraws++;
}

/** Heat grid over the visible window (the zoomed part of the slice rectangle). */
function computeHeat() {
  state.grid = null;
  if (state.heat === 'none') return;
  const spec = state.slice.spec;
  const x = zx().domain();
  const y = zy().domain();
  const r = spec.rect;
  const rect = { x0: Math.max(r.x0, x[0]), x1: Math.min(r.x1, x[1]), y0: Math.max(r.y0, y[0]), y1: Math.min(r.y1, y[1]) };
  if (!(rect.x0 < rect.x1 && rect.y0 < rect.y1)) return;
  const layer = heatLayer(table(), spec, state.heat);
  layer.cells = HEAT_CELLS;
  state.grid = { rect, label: layer.label, ...heatGrid({ ...spec, rect }, layer) };
}

function draw() {
  const t = table();
  const { spec, polygons, gaps, feasible } = state.slice;
  sx.domain([spec.rect.x0, spec.rect.x1]).range([M.left, W - M.right]);
  sy.domain([spec.rect.y0, spec.rect.y1]).range([H - M.bottom, M.top]);
  const x = zx();
  const y = zy();
  svg.select('g.x-axis').attr('transform', `translate(0,${H - M.bottom})`).call(axisBottom(x).ticks(8));
  svg.select('g.y-axis').attr('transform', `translate(${M.left},0)`).call(axisLeft(y).ticks(8));
  svg.select('text.x-label').attr('x', (M.left + W - M.right) / 2).attr('y', H - 12).text(t.thetaNames[spec.axes[0]]);
  svg.select('text.y-label').attr('transform', `translate(16,${(M.top + H - M.bottom) / 2}) rotate(-90)`).text(t.thetaNames[spec.axes[1]]);
  svg.select('rect.background').attr('width', W).attr('height', H);
  svg.select('rect.frame').attr('x', M.left).attr('y', M.top).attr('width', W - M.left - M.right).attr('height', H - M.top - M.bottom);
  svg.select('#plot-clip rect').attr('x', M.left).attr('y', M.top).attr('width', W - M.left - M.right).attr('height', H - M.top - M.bottom);

  // heat under the borders, clipped to the covered polygons (as in `tessera map`)
  svg.select('#covered-clip').selectAll('path').data(state.grid ? polygons : []).join('path').attr('d', (p) => pathOf(p.polygon, x, y));
  const g = state.grid;
  const cs = g && g.range ? scaleSequential(heatInterpolator).domain(g.range) : null;
  const cw = g ? (g.rect.x1 - g.rect.x0) / g.cells : 0;
  const ch = g ? (g.rect.y1 - g.rect.y0) / g.cells : 0;
  svg
    .select('g.heat')
    .selectAll('rect')
    .data(cs ? g.runs : [])
    .join('rect')
    .attr('x', (r) => x(g.rect.x0 + r.c0 * cw))
    .attr('y', (r) => y(g.rect.y0 + (r.row + 1) * ch))
    .attr('width', (r) => x(g.rect.x0 + r.c1 * cw) - x(g.rect.x0 + r.c0 * cw) + 0.3)
    .attr('height', (r) => y(g.rect.y0 + r.row * ch) - y(g.rect.y0 + (r.row + 1) * ch) + 0.3)
    .attr('fill', (r) => cs(r.value));

  const col = state.colours;
  svg
    .select('g.regions')
    .classed('over-heat', !!state.grid)
    .selectAll('path.region')
    .data(polygons, (p) => p.id)
    .join('path')
    .attr('class', 'region')
    .attr('data-region', (p) => p.id)
    .attr('d', (p) => pathOf(p.polygon, x, y))
    .attr('fill', (p, k) => (state.grid ? 'none' : paletteColour(col.colour[k])));

  const gl = svg.select('g.gaps').style('display', state.showGaps ? null : 'none');
  const many = (ps) => ps.map((q) => pathOf(ccw(q), x, y)).join('');
  gl.selectAll('path.infeasible').data(gaps.infeasible.length ? [gaps.infeasible] : []).join('path').attr('class', 'infeasible').attr('d', many);
  gl.selectAll('path.hole')
    .data(gaps.holeGroups)
    .join('path')
    .attr('class', 'hole')
    .attr('d', (grp) => many(grp.map((q) => gaps.holes[q])));
  gl.selectAll('path.uncovered')
    .data(feasible === null && gaps.uncovered.length ? [gaps.uncovered] : [])
    .join('path')
    .attr('class', 'uncovered')
    .attr('d', many);
  const rings = gaps.holeGroups.map((grp) => centroid(gaps.holes[grp.reduce((a, q) => (area(gaps.holes[q]) > area(gaps.holes[a]) ? q : a), grp[0])]));
  gl.selectAll('circle.hole-ring')
    .data(rings)
    .join('circle')
    .attr('class', 'hole-ring')
    .attr('cx', (c) => x(c[0]))
    .attr('cy', (c) => y(c[1]))
    .attr('r', 13);

  // region ids at the centroid of every polygon big enough on screen to hold one
  const pxArea = Math.abs((x(1) - x(0)) * (y(1) - y(0)));
  svg
    .select('g.ids')
    .style('display', state.showIds ? null : 'none')
    .selectAll('text')
    .data(state.showIds ? polygons.filter((p) => p.area * pxArea > 260) : [], (p) => p.id)
    .join('text')
    .attr('data-region', (p) => p.id)
    .attr('text-anchor', 'middle')
    .attr('dy', '0.35em')
    .attr('x', (p) => x(centroid(p.polygon)[0]))
    .attr('y', (p) => y(centroid(p.polygon)[1]))
    .text((p) => p.id);

  // closed-loop runs, projected onto the current axes
  const [ix, iy] = spec.axes;
  const ln = line()
    .x((th) => x(th[ix]))
    .y((th) => y(th[iy]));
  const tr = svg.select('g.trajectories').selectAll('g.trajectory').data(state.trajectories).join((e) => {
    const gg = e.append('g').attr('class', 'trajectory');
    gg.append('path').attr('class', 'casing');
    gg.append('path').attr('class', 'line');
    gg.append('circle').attr('class', 'start').attr('r', 4.5);
    gg.append('path').attr('class', 'end');
    return gg;
  });
  tr.attr('data-end', (d) => d.end).attr('data-steps', (d) => d.points.length - 1);
  tr.select('path.casing').attr('d', (d) => ln(d.points));
  tr.select('path.line').attr('d', (d) => ln(d.points));
  tr.select('circle.start')
    .attr('cx', (d) => x(d.points[0][ix]))
    .attr('cy', (d) => y(d.points[0][iy]));
  tr.select('path.end').attr('d', (d) => {
    if (d.end !== 'outside') return null;
    const e = d.points[d.points.length - 1];
    const ex = x(e[ix]);
    const ey = y(e[iy]);
    return `M${ex - 5},${ey - 5}L${ex + 5},${ey + 5}M${ex - 5},${ey + 5}L${ex + 5},${ey - 5}`;
  });
  showReadout();
}

function legend() {
  const t = table();
  const { polygons } = state.slice;
  const col = state.colours;
  const leg = select('#legend').html('');
  if (state.grid && state.grid.range) {
    leg.append('div').attr('class', 'head').text(state.grid.label);
    const bar = leg.append('div').attr('class', 'heatbar');
    bar.style('background', `linear-gradient(to right, ${Array.from({ length: 11 }, (_, k) => heatInterpolator(k / 10)).join(', ')})`);
    leg.append('div').attr('class', 'heat-range').attr('data-range', JSON.stringify(state.grid.range)).text(`${fmt(state.grid.range[0])} … ${fmt(state.grid.range[1])} (visible window)`);
  } else if (col.distinct) {
    const seen = new Map();
    col.colour.forEach((c, k) => (seen.has(c) ? null : seen.set(c, k)));
    Array.from(seen.entries())
      .sort((a, b) => a[0] - b[0])
      .forEach(([c, k]) => {
        const r = t.regions[polygons[k].index];
        const text = state.colourBy === 'law' ? lawText(t, r) : state.colourBy === 'active' ? activeSetText(t, r) : `region ${r.id}`;
        const row = leg.append('div').attr('class', 'key');
        row.append('span').attr('class', 'swatch').style('background', paletteColour(c));
        row.append('span').attr('title', text).text(text);
      });
  } else {
    leg.append('div')
      .attr('class', 'note')
      .text(`${new Set(col.keys).size} different ${state.colourBy === 'active' ? 'active sets' : `${state.colourBy}s`}: neighbours always differ in colour, colours repeat far apart — hover for the law.`);
  }
  const key = (cls, text) => {
    const row = leg.append('div').attr('class', 'key');
    row.append('span').attr('class', `swatch ${cls}`);
    row.append('span').text(text);
  };
  key('hatch', 'infeasible: no input sequence meets the limits');
  key('hole', 'HOLE (ringed): feasible, but no region — no law');
  if (state.trajectories.length) key('traj', 'closed loop under the table law (○ start, × left every region)');
}

function summary() {
  const { polygons, gaps, feasible } = state.slice;
  const a = gaps.areas;
  const n = gaps.holeGroups.length;
  const sum = select('#summary').html('');
  const figures = sum.append('div').attr('id', 'areas').attr('data-areas', JSON.stringify(a));
  figures.append('span').text(
    `${polygons.length} regions in slice · covered ${pct(a.covered / a.rect)} · uncovered ${pct(a.uncovered / a.rect)}` +
      (feasible === null ? ' (not classified: no problem data) · ' : ` = infeasible ${pct(a.infeasible / a.rect)} + holes ${pct(a.holes / a.rect)} · `),
  );
  figures
    .append('strong')
    .attr('id', 'hole-count')
    .attr('data-holes', n)
    .classed('holes', n > 0)
    .text(feasible === null ? 'holes: unknown' : n ? `HOLES: ${n} (${pct(a.holes / a.rect)} of slice)` : 'holes: none');
  sum.append('div').attr('class', 'note').text('exact polygon areas of the whole slice rectangle');
}

function eventTheta(ev) {
  const pt = pointer(ev, svg.node());
  return liftPoint(state.slice.spec, zx().invert(pt[0]), zy().invert(pt[1]));
}

function resetInfo() {
  svg.selectAll('path.region').classed('hover', false);
  select('#info').attr('data-region', null).attr('data-gap', null).html('').text('hover a region for its id, active set and law');
}

function showInfo(th) {
  const t = table();
  const ri = locateSequential(t.regions, th);
  const info = select('#info');
  svg.selectAll('path.region').classed('hover', (p) => ri >= 0 && p.index === ri);
  svg.selectAll('path.region.hover').raise();
  if (ri < 0) {
    const pt = [th[state.axes[0]], th[state.axes[1]]];
    const g = state.slice.gaps;
    const R = state.slice.spec.rect;
    const e = 1e-9 * Math.max(1, R.x1 - R.x0, R.y1 - R.y0);
    const inHole = g.holes.some((q) => convexContains(q, pt, e));
    const inInf = !inHole && g.infeasible.some((q) => convexContains(q, pt, e));
    info.attr('data-region', -1).attr('data-gap', inHole ? 'hole' : inInf ? 'infeasible' : 'unclassified').html('');
    info.append('div').attr('class', `head${inHole ? ' warn' : ''}`).text(inHole ? 'HOLE: no region, yet the problem is feasible here' : inInf ? 'infeasible here' : 'no region here');
    info.append('div').text(inHole ? 'the controller has no law at this θ: a solver gap, needs a fallback.' : inInf ? 'no input sequence meets the constraints at this θ.' : 'not classified (no problem data).');
    return;
  }
  const r = t.regions[ri];
  info.attr('data-region', r.id).attr('data-gap', null).html('');
  info.append('div').attr('class', 'head').text(`region ${r.id}`);
  info.append('div').text(`active set: ${activeSetText(t, r)}`);
  info.append('div').attr('class', 'law').text(lawText(t, r));
}

/** Readout of u(0) at the clicked slice point; kept in step with the sliders (recomputed on every redraw). */
function showReadout() {
  const ro = select('#readout');
  if (!state.pick) {
    ro.attr('data-theta', null).attr('data-region', null).attr('data-u', null).html('').text('click the map to read u(0) there');
    svg.select('circle.pick').style('display', 'none');
    return;
  }
  const t = table();
  const th = liftPoint(state.slice.spec, state.pick[0], state.pick[1]);
  const ev = evaluateTable(t, th);
  ro.html('').attr('data-theta', JSON.stringify(th));
  ro.append('div').attr('class', 'head').text(`θ = (${th.map((v, k) => `${t.thetaNames[k]} ${fmt(v)}`).join(', ')})`);
  if (ev.region >= 0) {
    const r = t.regions[ev.region];
    ro.attr('data-region', r.id).attr('data-u', JSON.stringify(ev.u));
    ro.append('div').attr('class', 'u').text(`${ev.u.map((v, i) => `${t.inputNames[i] || `u${i + 1}`}(0) = ${fmt(v)}`).join(', ')}   [region ${r.id}]`);
  } else {
    ro.attr('data-region', -1).attr('data-u', 'null');
    ro.append('div').attr('class', 'u warn').text('no region holds this θ: no law (fallback needed)');
  }
  svg.select('circle.pick').attr('cx', zx()(state.pick[0])).attr('cy', zy()(state.pick[1])).style('display', null);
}

/** Start a closed-loop run at slice point (x, y) with the current fixed values. */
function addTrajectory(x, y) {
  // closed-loop runs need a plant: an MPC table, not a directly given mpQP
  if (!state.problem || !state.problem.loaded.model) return null;
  const m = state.problem.loaded.model;
  const run = simulateClosedLoop(table(), m, liftPoint(state.slice.spec, x, y), state.steps);
  state.trajectories.push(run);
  draw();
  legend();
  return run;
}

const zoomer = zoom()
  .scaleExtent([1, 500])
  .extent([
    [M.left, M.top],
    [W - M.right, H - M.bottom],
  ])
  .translateExtent([
    [M.left, M.top],
    [W - M.right, H - M.bottom],
  ])
  .on('zoom', (ev) => {
    state.transform = ev.transform;
    if (state.slice) draw();
  })
  .on('end', () => {
    if (!state.slice || state.heat === 'none') return;
    computeHeat();
    draw();
    legend();
  });
svg.call(zoomer).on('dblclick.zoom', null);

svg.on('mousemove', (ev) => {
  if (state.data) showInfo(eventTheta(ev));
});
svg.on('mouseleave', () => svg.selectAll('path.region').classed('hover', false));
svg.on('click', (ev) => {
  if (!state.data) return;
  const th = eventTheta(ev);
  state.pick = [th[state.axes[0]], th[state.axes[1]]];
  if (state.trajMode) addTrajectory(state.pick[0], state.pick[1]);
  showReadout();
});

function changeAxis(a, v) {
  const other = state.axes[1 - a];
  if (v === other) state.axes[1 - a] = state.axes[a];
  state.axes[a] = v;
  select('#axis-x').property('value', state.axes[0]);
  select('#axis-y').property('value', state.axes[1]);
  buildSliders();
  state.pick = null;
  state.transform = zoomIdentity;
  svg.call(zoomer.transform, zoomIdentity);
  // the region under the pointer belonged to the old plane
  resetInfo();
  compute();
}
select('#axis-x').on('change', function () {
  changeAxis(0, +this.value);
});
select('#axis-y').on('change', function () {
  changeAxis(1, +this.value);
});
select('#colour-by').on('change', function () {
  state.colourBy = this.value;
  compute();
});
select('#heat').on('change', function () {
  state.heat = this.value;
  compute();
});
select('#show-gaps').on('change', function () {
  state.showGaps = this.checked;
  svg.select('g.gaps').style('display', state.showGaps ? null : 'none');
});
select('#show-ids').on('change', function () {
  state.showIds = this.checked;
  draw();
});
select('#traj-mode').on('change', function () {
  state.trajMode = this.checked;
});
select('#traj-steps').on('change', function () {
  const v = Number(this.value);
  if (Number.isInteger(v) && v > 0 && v <= 10000) state.steps = v;
  else this.value = state.steps;
});
select('#traj-clear').on('click', () => {
  state.trajectories = [];
  draw();
  legend();
});
select('#zoom-reset').on('click', () => svg.transition().duration(200).call(zoomer.transform, zoomIdentity));

/** The current view as a standalone SVG document: computed styles inlined, interaction-only parts dropped. */
function exportSvg() {
  const node = svg.node();
  const clone = node.cloneNode(true);
  const props = ['fill', 'fill-opacity', 'stroke', 'stroke-width', 'stroke-opacity', 'stroke-dasharray', 'stroke-linejoin', 'paint-order', 'display', 'font-size', 'font-weight', 'font-family', 'opacity', 'shape-rendering'];
  const src = [node, ...node.querySelectorAll('*')];
  const dst = [clone, ...clone.querySelectorAll('*')];
  src.forEach((el, i) => {
    const cs = getComputedStyle(el);
    const style = props.map((p) => `${p}:${cs.getPropertyValue(p).replace(/url\("?[^#"]*(#[^")]+)"?\)/g, 'url($1)')}`).join(';');
    dst[i].setAttribute('style', style);
  });
  clone.querySelectorAll('circle.pick').forEach((c) => c.remove());
  clone.setAttribute('xmlns', 'http://www.w3.org/2000/svg');
  const t = table();
  const title = document.createElementNS('http://www.w3.org/2000/svg', 'title');
  title.textContent = `${t.name}: slice ${t.thetaNames[state.axes[0]]} × ${t.thetaNames[state.axes[1]]}`;
  clone.insertBefore(title, clone.firstChild);
  return `<?xml version="1.0" encoding="UTF-8"?>\n${new XMLSerializer().serializeToString(clone)}\n`;
}

/** The current view as a PNG data URL at `scale` × the on-screen size. */
function exportPng(scale = 2) {
  const text = exportSvg();
  return new Promise((resolve, reject) => {
    const img = new Image();
    img.onload = () => {
      const canvas = document.createElement('canvas');
      canvas.width = W * scale;
      canvas.height = H * scale;
      const ctx = canvas.getContext('2d');
      ctx.fillStyle = '#ffffff';
      ctx.fillRect(0, 0, canvas.width, canvas.height);
      ctx.drawImage(img, 0, 0, canvas.width, canvas.height);
      resolve(canvas.toDataURL('image/png'));
    };
    img.onerror = () => reject(new Error('the SVG of the view could not be rendered'));
    img.src = `data:image/svg+xml;charset=utf-8,${encodeURIComponent(text)}`;
  });
}

function download(name, href) {
  const a = document.createElement('a');
  a.download = name;
  a.href = href;
  document.body.appendChild(a);
  a.click();
  a.remove();
}
const fileStem = () => `${table().name}-${table().thetaNames[state.axes[0]]}-${table().thetaNames[state.axes[1]]}`;
select('#export-svg').on('click', () => {
  const url = URL.createObjectURL(new Blob([exportSvg()], { type: 'image/svg+xml' }));
  download(`${fileStem()}.svg`, url);
  setTimeout(() => URL.revokeObjectURL(url), 1000);
});
select('#export-png').on('click', () => {
  exportPng().then((url) => download(`${fileStem()}.png`, url));
});

select('#file').on('change', function () {
  const f = this.files && this.files[0];
  if (!f) return;
  f.text()
    .then((text) => setup({ table: parseTableJson(text, f.name), problem: null }))
    .catch((e) => select('#summary').html('').append('strong').attr('class', 'holes').text(String(e.message || e)));
});

window.tesseraViewer = {
  state,
  /** page coordinates of a slice point under the current zoom (for tests and scripted use) */
  project(x, y) {
    const r = svg.node().getBoundingClientRect();
    const k = r.width / W;
    return [r.left + zx()(x) * k, r.top + zy()(y) * k];
  },
  setFixed,
  /** u(0) at a full θ by the engine's evaluation (a NaN entry lies in no region) */
  evaluate: (theta) => evaluateTable(table(), theta),
  /** the law of region `index` at θ */
  lawAt: (index, theta) => applyAffine(table().regions[index].law, theta),
  addTrajectory,
  /** zoom so that the visible window is [x0, x1] × [y0, y1] (slice units) */
  zoomTo(x0, x1, y0, y1) {
    const k = Math.min((sx(x1) - sx(x0)) / (W - M.left - M.right), (sy(y0) - sy(y1)) / (H - M.top - M.bottom));
    const s = 1 / k;
    const tr = zoomIdentity.translate(M.left - s * sx(x0), M.top - s * sy(y1)).scale(s);
    svg.call(zoomer.transform, tr);
  },
  visibleWindow: () => ({ x: zx().domain(), y: zy().domain() }),
  exportSvg,
  exportPng,
};

if (window.TESSERA_DATA) setup(window.TESSERA_DATA);
else
  fetch('data.json')
    .then((r) => r.json())
    .then(setup)
    .catch(() => select('#summary').text('no table loaded: use “Load table…”'));
