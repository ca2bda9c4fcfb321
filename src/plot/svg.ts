/**
 * SVG map of a 2-D slice, written as a string (no DOM at run time): d3 scales for the axes and
 * ticks, d3-path for the polygons, d3-shape for trajectory lines.
 */
import { format, interpolateRgbBasis, line, path, scaleLinear, scaleSequential } from 'd3';
import type { TableFile } from '../table/format.js';
import type { AnalysedSlice } from '../check/gaps.js';
import type { CriticalRegion } from '../mpqp/types.js';
import type { SliceSpec } from '../partition/slice.js';
import { area, ccw as ccwPoly, centroid, thickness, type Polygon } from '../partition/polygon.js';
import { tol } from '../tol.js';
import { colourByKey, lawKey, paletteColour, HOLE_FILL, HOLE_STROKE, INFEASIBLE_FILL, INFEASIBLE_HATCH } from './colour.js';

export type ColourBy = 'law' | 'active' | 'region';

export interface Trajectory {
  /** θ along the closed loop, first entry the initial state */
  points: number[][];
  /** why it stopped: step budget used, or θ left every region (outside the table) */
  end: 'steps' | 'outside';
}

export interface HeatLayer {
  label: string;
  /** value at a slice point from the law of the region that holds it; null where no region does */
  value: (x: number, y: number) => number | null;
  /** cells per axis */
  cells?: number;
}

export interface MapOptions {
  colourBy?: ColourBy;
  trajectories?: Trajectory[];
  heat?: HeatLayer;
  /** page size in px */
  width?: number;
  height?: number;
}

export interface MapResult {
  svg: string;
  /** colour index per slice polygon (same order as slice.polygons) */
  colours: number[];
  neighbours: number[][];
  holeCount: number;
}

const num = format('.4~g');
const pct = format('.1%');

export function esc(s: string): string {
  return s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;');
}

/** "0.52·x1 − 1.3·x2 + 0.1" */
export function formatAffine(F: number[], g: number, names: string[]): string {
  const terms: string[] = [];
  F.forEach((c, k) => {
    if (Math.abs(c) < 1e-12) return;
    const mag = num(Math.abs(c));
    terms.push(`${terms.length ? (c < 0 ? '− ' : '+ ') : c < 0 ? '−' : ''}${mag === '1' ? '' : mag + '·'}${names[k]}`);
  });
  if (Math.abs(g) >= 1e-12 || terms.length === 0) terms.push(`${terms.length ? (g < 0 ? '− ' : '+ ') : g < 0 ? '−' : ''}${num(Math.abs(g))}`);
  return terms.join(' ');
}

/** One line about region `index` of the table: its id, active constraints by meaning, and u(0) as affine formulas in θ names. */
export function describeRegion(table: TableFile, index: number): string {
  const r = table.regions[index];
  return `region ${r.id} · active set: ${activeSetText(table, r)} · ${lawText(table, r)}`;
}

/** The active constraints of a region by their meaning, e.g. "u1(k=0) ≤ 1, x2(k=3) ≥ −2", or "none (unconstrained optimum)". */
export function activeSetText(table: TableFile, r: Pick<CriticalRegion, 'activeSet'>): string {
  return r.activeSet.length ? r.activeSet.map((k) => table.constraints[k] ?? `row ${k}`).join(', ') : 'none (unconstrained optimum)';
}

/** The law of a region as formulas in the θ names, e.g. "u(0) = −0.5·pos − 1.2·speed". */
export function lawText(table: TableFile, r: Pick<CriticalRegion, 'law'>): string {
  return r.law.F.map((row, i) => `${table.inputNames[i] ?? `u${i + 1}`}(0) = ${formatAffine(row, r.law.g[i], table.thetaNames)}`).join('; ');
}

/** Colour ramp of heat layers (light = low, dark = high), shared by the SVG maps and the viewer. */
export const heatInterpolator = interpolateRgbBasis(['#fbf3dc', '#f0b45d', '#c8584a', '#6d2b6e', '#22184a']);

/** A heat layer sampled on a grid over the slice rectangle, as runs of cells in the same colour bin. */
export interface HeatGrid {
  /** cells per axis */
  cells: number;
  /** colour bins over the range */
  bins: number;
  /** [lowest, highest] value met (high > low), or null when no cell is covered */
  range: [number, number] | null;
  /** per grid row (0 = bottom), columns c0 ≤ c < c1 share bin `bin`, drawn in the bin's mid value `value` */
  runs: { row: number; c0: number; c1: number; bin: number; value: number }[];
}

/**
 * Sample `heat` at the centres of a cells×cells grid over the slice rectangle. Cells straddling a
 * region border take the law of a region within a cell diagonal, so that a layer clipped to the
 * covered polygons follows the exact boundary. Values in the layer's units.
 */
export function heatGrid(spec: SliceSpec, heat: HeatLayer, bins = 48): HeatGrid {
  const cells = heat.cells ?? 160;
  const { x0, x1, y0, y1 } = spec.rect;
  // A cell takes the value at its centre, from the law of the region holding the centre. A cell
  // whose centre lies in no region but that straddles the covered set takes the value at the
  // first of a 4×4 grid of points inside it that some region holds, from that region's law at
  // that point: a law is never extrapolated outside its region (extrapolated laws of thin regions
  // ran far past the input limits and stretched the scale).
  const SUB = 4;
  const cellValue = (c: number, r: number): number | null => {
    const at = (fc: number, fr: number) => heat.value(x0 + ((c + fc) / cells) * (x1 - x0), y0 + ((r + fr) / cells) * (y1 - y0));
    const v = at(0.5, 0.5);
    if (v !== null) return v;
    for (let a = 0; a < SUB; a++)
      for (let b = 0; b < SUB; b++) {
        const w = at((a + 0.5) / SUB, (b + 0.5) / SUB);
        if (w !== null) return w;
      }
    return null;
  };
  const vals: (number | null)[] = [];
  let lo = Infinity;
  let hi = -Infinity;
  for (let r = 0; r < cells; r++)
    for (let c = 0; c < cells; c++) {
      const v = cellValue(c, r);
      vals.push(v);
      if (v !== null) {
        lo = Math.min(lo, v);
        hi = Math.max(hi, v);
      }
    }
  if (!(lo <= hi)) return { cells, bins, range: null, runs: [] };
  const range: [number, number] = [lo, hi === lo ? lo + 1 : hi];
  const bin = (v: number) => Math.min(bins - 1, Math.floor(((v - range[0]) / (range[1] - range[0])) * bins));
  const runs: HeatGrid['runs'] = [];
  for (let r = 0; r < cells; r++) {
    let c = 0;
    while (c < cells) {
      const v = vals[r * cells + c];
      if (v === null) {
        c++;
        continue;
      }
      const b = bin(v);
      let e = c + 1;
      while (e < cells && vals[r * cells + e] !== null && bin(vals[r * cells + e]!) === b) e++;
      runs.push({ row: r, c0: c, c1: e, bin: b, value: range[0] + ((b + 0.5) / bins) * (range[1] - range[0]) });
      c = e;
    }
  }
  return { cells, bins, range, runs };
}

function polyPath(p: Polygon, sx: (v: number) => number, sy: (v: number) => number): string {
  const ctx = path();
  p.forEach(([x, y], k) => (k ? ctx.lineTo(sx(x), sy(y)) : ctx.moveTo(sx(x), sy(y))));
  ctx.closePath();
  return ctx.toString();
}

/**
 * Palette index per slice polygon (same order as `slice.polygons`): one colour per law, active set
 * or region, adjacent polygons with different keys never alike. `keys` are the colouring keys,
 * `neighbours` the edge-adjacency lists, `distinct` whether every key got its own colour.
 */
export function sliceColours(
  table: TableFile,
  slice: Pick<AnalysedSlice, 'spec' | 'polygons'>,
  colourBy: ColourBy,
): { keys: string[]; colour: number[]; neighbours: number[][]; distinct: boolean } {
  const { spec, polygons } = slice;
  const keys = polygons.map((p) => {
    const r = table.regions[p.index];
    return colourBy === 'law' ? lawKey(r.law) : colourBy === 'active' ? r.activeSet.join(',') : String(r.id);
  });
  const scale = Math.max(spec.rect.x1 - spec.rect.x0, spec.rect.y1 - spec.rect.y0);
  const c = colourByKey(
    polygons.map((p) => p.polygon),
    keys,
    tol.inside * 100 * Math.max(1, scale),
    polygons.map((p) => p.area),
  );
  return { keys, ...c };
}

/**
 * Border width of a region in px: the full width for regions at least 8 px thick, thinner in
 * proportion below that (down to 0.05 px), so that a dense band of thin regions reads as a band of
 * colour with fine lines instead of a black smear of overlapping strokes.
 */
export function borderWidth(pixelPolygon: Polygon, full: number): string {
  const t = thickness(pixelPolygon);
  return Math.max(0.05, Math.min(full, (full * t) / 8)).toFixed(2);
}

/** Render the analysed slice as a standalone SVG document. */
export function renderMapSvg(table: TableFile, slice: AnalysedSlice, opts: MapOptions = {}): MapResult {
  const colourBy = opts.colourBy ?? 'law';
  const W = opts.width ?? 940;
  const H = opts.height ?? 680;
  const m = { left: 78, top: 96, right: 310, bottom: 74 };
  const pw = W - m.left - m.right;
  const ph = H - m.top - m.bottom;
  const { spec, polygons, gaps } = slice;
  const [ix, iy] = spec.axes;
  const sx = scaleLinear().domain([spec.rect.x0, spec.rect.x1]).range([m.left, m.left + pw]);
  const sy = scaleLinear().domain([spec.rect.y0, spec.rect.y1]).range([m.top + ph, m.top]);
  const names = table.thetaNames;
  const out: string[] = [];
  const push = (s: string) => out.push(s);

  const { keys, colour, neighbours, distinct } = sliceColours(table, slice, colourBy);
  const holeCount = gaps.holeGroups.length;
  const holeArea = gaps.areas.holes;

  push(`<?xml version="1.0" encoding="UTF-8"?>`);
  push(
    `<svg xmlns="http://www.w3.org/2000/svg" width="${W}" height="${H}" viewBox="0 0 ${W} ${H}" font-family="DejaVu Sans, Liberation Sans, Arial, sans-serif" font-size="12">`,
  );
  push(`<defs>`);
  push(
    `<pattern id="hatch" patternUnits="userSpaceOnUse" width="7" height="7" patternTransform="rotate(45)"><rect width="7" height="7" fill="${INFEASIBLE_FILL}"/><line x1="0" y1="0" x2="0" y2="7" stroke="${INFEASIBLE_HATCH}" stroke-width="1.6"/></pattern>`,
  );
  push(`<clipPath id="plot"><rect x="${m.left}" y="${m.top}" width="${pw}" height="${ph}"/></clipPath>`);
  push(`</defs>`);
  push(`<rect width="${W}" height="${H}" fill="#ffffff"/>`);

  // title block
  const incomplete = table.stats && table.stats.complete === false;
  const fixedText = spec.fixed
    .map((v, k) => (k === ix || k === iy ? null : `${names[k]} = ${num(v)}`))
    .filter((s) => s !== null)
    .join(', ');
  push(`<text x="${m.left}" y="28" font-size="18" font-weight="bold">${esc(table.name)}: slice ${esc(names[ix])} × ${esc(names[iy])}</text>`);
  const { x0, x1, y0, y1 } = spec.rect;
  const windowed = x0 > table.box.lower[ix] || x1 < table.box.upper[ix] || y0 > table.box.lower[iy] || y1 < table.box.upper[iy];
  const windowText = windowed ? `window ${names[ix]} ∈ [${num(x0)}, ${num(x1)}], ${names[iy]} ∈ [${num(y0)}, ${num(y1)}]` : '';
  const subtitle = [fixedText ? `fixed: ${fixedText}` : windowed ? '' : 'both parameters on the axes (the whole box)', windowText].filter(Boolean).join(' · ');
  push(`<text x="${m.left}" y="48" fill="#333">${esc(subtitle)}</text>`);
  const cov = gaps.areas.rect > 0 ? gaps.areas.covered / gaps.areas.rect : 0;
  const inf = gaps.areas.rect > 0 ? gaps.areas.infeasible / gaps.areas.rect : 0;
  let summary = `${polygons.length} regions in this slice · covered ${pct(cov)} · infeasible ${pct(inf)} · `;
  push(
    `<text x="${m.left}" y="68" fill="#333">${esc(summary)}<tspan font-weight="bold" fill="${holeCount ? HOLE_FILL : '#1b7a2e'}" id="hole-count" data-holes="${holeCount}">${
      holeCount ? `HOLES: ${holeCount} (${pct(holeArea / gaps.areas.rect)} of slice)` : 'holes: none'
    }</tspan></text>`,
  );
  summary = '';
  if (incomplete)
    push(`<text x="${m.left}" y="86" fill="${HOLE_FILL}" font-weight="bold">INCOMPLETE TABLE (${esc(table.stats.stopReason)}): uncovered parts may be unexplored</text>`);

  // plot body
  push(`<g clip-path="url(#plot)">`);
  push(`<rect x="${m.left}" y="${m.top}" width="${pw}" height="${ph}" fill="#ffffff"/>`);
  let heatRange: [number, number] | null = null;
  if (opts.heat) {
    const grid = heatGrid(spec, opts.heat);
    if (grid.range) {
      heatRange = grid.range;
      const cs = scaleSequential(heatInterpolator).domain(heatRange);
      const cw = pw / grid.cells;
      const ch = ph / grid.cells;
      push(`<clipPath id="covered">${polygons.map((p) => `<path d="${polyPath(p.polygon, sx, sy)}"/>`).join('')}</clipPath>`);
      push(`<g class="heat" shape-rendering="crispEdges" clip-path="url(#covered)">`);
      for (const { row: r, c0: c, c1: e, value } of grid.runs)
        push(
          `<rect x="${(m.left + c * cw).toFixed(2)}" y="${(m.top + ph - (r + 1) * ch).toFixed(2)}" width="${((e - c) * cw + 0.3).toFixed(2)}" height="${(ch + 0.3).toFixed(2)}" fill="${cs(value)}"/>`,
        );
      push(`</g>`);
    }
  }
  polygons.forEach((p, k) => {
    const fill = opts.heat ? 'none' : paletteColour(colour[k]);
    const width = borderWidth(p.polygon.map(([x, y]) => [sx(x), sy(y)] as [number, number]), opts.heat ? 0.7 : 0.6);
    const stroke = opts.heat ? `stroke="#8a8a8a" stroke-width="${width}"` : `stroke="#3c3c3c" stroke-width="${width}"`;
    const r = table.regions[p.index];
    push(
      `<path class="region" data-region="${r.id}" data-colour="${colour[k]}" d="${polyPath(p.polygon, sx, sy)}" fill="${fill}" ${stroke} stroke-linejoin="round"><title>${esc(describeRegion(table, p.index))}</title></path>`,
    );
  });
  // one path per kind so that adjacent pieces render without anti-aliasing seams
  if (gaps.infeasible.length)
    push(
      `<path class="infeasible" d="${gaps.infeasible.map((q) => polyPath(ccwPoly(q), sx, sy)).join('')}" fill="url(#hatch)" stroke="none"><title>infeasible: no input sequence meets the constraints</title></path>`,
    );
  gaps.holeGroups.forEach((g, k) =>
    push(
      `<path class="hole" data-hole="${k + 1}" d="${g.map((q) => polyPath(ccwPoly(gaps.holes[q]), sx, sy)).join('')}" fill="${HOLE_FILL}" stroke="${HOLE_FILL}" stroke-width="1"><title>HOLE ${k + 1}: feasible, but no region covers this (area ${num(g.reduce((a, q) => a + area(gaps.holes[q]), 0))})</title></path>`,
    ),
  );
  // region ids where they fit
  if (polygons.length <= 400)
    polygons.forEach((p) => {
      const pix = p.polygon.map(([x, y]) => [sx(x), sy(y)] as [number, number]);
      if (thickness(pix) < 9) return;
      const [cx, cy] = centroid(pix);
      const id = String(table.regions[p.index].id);
      if (thickness(pix) < 4 + 3.2 * id.length) return;
      push(`<text class="region-label" x="${cx.toFixed(1)}" y="${(cy + 3.5).toFixed(1)}" text-anchor="middle" font-size="10" fill="#1e1e1e"${opts.heat ? ' stroke="#ffffff" stroke-width="2.5" paint-order="stroke"' : ''} pointer-events="none">${id}</text>`);
    });
  push(`</g>`);

  // hole markers: a ring around each hole component so that small ones are not missed
  gaps.holeGroups.forEach((g, k) => {
    const biggest = g.reduce((a, q) => (area(gaps.holes[q]) > area(gaps.holes[a]) ? q : a), g[0]);
    const [cx, cy] = centroid(gaps.holes[biggest]);
    const px = sx(cx);
    const py = sy(cy);
    push(
      `<g class="hole-marker"><circle cx="${px.toFixed(1)}" cy="${py.toFixed(1)}" r="13" fill="none" stroke="${HOLE_STROKE}" stroke-width="3"/><circle cx="${px.toFixed(1)}" cy="${py.toFixed(1)}" r="13" fill="none" stroke="#ffffff" stroke-width="1" stroke-dasharray="3 3"/><text x="${(px + 17).toFixed(1)}" y="${(py - 10).toFixed(1)}" font-weight="bold" font-size="12" fill="${HOLE_STROKE}" stroke="#ffffff" stroke-width="3" paint-order="stroke">hole ${k + 1}</text></g>`,
    );
  });

  // trajectories
  if (opts.trajectories?.length) {
    const ln = line<number[]>()
      .x((t) => sx(t[ix]))
      .y((t) => sy(t[iy]));
    push(`<g class="trajectories" clip-path="url(#plot)">`);
    for (const tr of opts.trajectories) {
      // white casing under the black line keeps it visible on dark heat colours too
      push(`<path d="${ln(tr.points)}" fill="none" stroke="#ffffff" stroke-width="4" stroke-opacity="0.85" stroke-linejoin="round"/>`);
      push(`<path class="trajectory" d="${ln(tr.points)}" fill="none" stroke="#111111" stroke-width="1.6" stroke-linejoin="round"/>`);
      for (const t of tr.points.slice(1)) push(`<circle cx="${sx(t[ix]).toFixed(1)}" cy="${sy(t[iy]).toFixed(1)}" r="1.8" fill="#111111"/>`);
      const s0 = tr.points[0];
      push(`<circle class="trajectory-start" cx="${sx(s0[ix]).toFixed(1)}" cy="${sy(s0[iy]).toFixed(1)}" r="4.5" fill="#ffffff" stroke="#111111" stroke-width="1.8"/>`);
      if (tr.end === 'outside') {
        const e = tr.points[tr.points.length - 1];
        const ex = sx(e[ix]);
        const ey = sy(e[iy]);
        push(`<path d="M${ex - 5},${ey - 5}L${ex + 5},${ey + 5}M${ex - 5},${ey + 5}L${ex + 5},${ey - 5}" stroke="${HOLE_STROKE}" stroke-width="2.4"/>`);
      }
    }
    push(`</g>`);
  }

  // frame and axes
  push(`<rect x="${m.left}" y="${m.top}" width="${pw}" height="${ph}" fill="none" stroke="#222" stroke-width="1"/>`);
  const fx = sx.tickFormat(8);
  for (const t of sx.ticks(8)) {
    const x = sx(t).toFixed(1);
    push(`<line x1="${x}" x2="${x}" y1="${m.top + ph}" y2="${m.top + ph + 5}" stroke="#222"/>`);
    push(`<text x="${x}" y="${m.top + ph + 18}" text-anchor="middle">${esc(fx(t))}</text>`);
  }
  const fy = sy.tickFormat(8);
  for (const t of sy.ticks(8)) {
    const y = sy(t).toFixed(1);
    push(`<line x1="${m.left - 5}" x2="${m.left}" y1="${y}" y2="${y}" stroke="#222"/>`);
    push(`<text x="${m.left - 8}" y="${(+y + 4).toFixed(1)}" text-anchor="end">${esc(fy(t))}</text>`);
  }
  push(`<text x="${m.left + pw / 2}" y="${m.top + ph + 40}" text-anchor="middle" font-size="14" font-weight="bold">${esc(names[ix])}</text>`);
  push(
    `<text transform="translate(${m.left - 52},${m.top + ph / 2}) rotate(-90)" text-anchor="middle" font-size="14" font-weight="bold">${esc(names[iy])}</text>`,
  );

  // legend
  const lx = m.left + pw + 28;
  let ly = m.top + 6;
  push(`<g class="legend">`);
  push(`<text x="${lx}" y="${ly}" font-weight="bold" font-size="13">Legend</text>`);
  ly += 20;
  const sw = (fill: string, stroke: string, sw2: number, label: string, sub?: string) => {
    push(`<rect x="${lx}" y="${ly - 11}" width="22" height="14" fill="${fill}" stroke="${stroke}" stroke-width="${sw2}"/>`);
    push(`<text x="${lx + 30}" y="${ly}">${esc(label)}</text>`);
    if (sub) {
      ly += 15;
      push(`<text x="${lx + 30}" y="${ly}" fill="#555" font-size="11">${esc(sub)}</text>`);
    }
    ly += 22;
  };
  if (!opts.heat) {
    const what = colourBy === 'law' ? 'law' : colourBy === 'active' ? 'active set' : 'region';
    if (distinct && polygons.length > 0) {
      push(`<text x="${lx}" y="${ly}" fill="#333">colour = ${esc(what)}; number = region id</text>`);
      ly += 18;
      const seen = new Map<number, number>();
      colour.forEach((c, k) => (seen.has(c) ? null : seen.set(c, k)));
      for (const [c, k] of [...seen.entries()].sort((a, b) => a[0] - b[0])) {
        const r = table.regions[polygons[k].index];
        const full = colourBy === 'law' ? lawText(table, r) : colourBy === 'active' ? (r.activeSet.length ? activeSetText(table, r) : 'none active') : `region ${r.id}`;
        const short = full.length > 37 ? full.slice(0, 36) + '…' : full;
        push(
          `<g class="legend-key"><rect x="${lx}" y="${ly - 11}" width="22" height="14" fill="${paletteColour(c)}" stroke="#3c3c3c" stroke-width="0.6"/><text x="${lx + 30}" y="${ly}" font-size="11">${esc(short)}<title>${esc(full)}</title></text></g>`,
        );
        ly += 18;
      }
      ly += 6;
    } else {
      push(`<rect x="${lx}" y="${ly - 11}" width="7" height="14" fill="${paletteColour(0)}" stroke="#3c3c3c" stroke-width="0.6"/>`);
      push(`<rect x="${lx + 7.5}" y="${ly - 11}" width="7" height="14" fill="${paletteColour(1)}" stroke="#3c3c3c" stroke-width="0.6"/>`);
      push(`<rect x="${lx + 15}" y="${ly - 11}" width="7" height="14" fill="${paletteColour(2)}" stroke="#3c3c3c" stroke-width="0.6"/>`);
      push(`<text x="${lx + 30}" y="${ly}">critical region (number = id)</text>`);
      ly += 15;
      const distinctCount = new Set(keys).size;
      push(`<text x="${lx + 30}" y="${ly}" fill="#555" font-size="11">${distinctCount} ${esc(what)}s; neighbours always differ,</text>`);
      ly += 14;
      push(`<text x="${lx + 30}" y="${ly}" fill="#555" font-size="11">colours repeat far apart: read the</text>`);
      ly += 14;
      push(`<text x="${lx + 30}" y="${ly}" fill="#555" font-size="11">${esc(what)} from the tooltip, not the hue</text>`);
      ly += 22;
    }
  } else {
    sw('#ffffff', '#8a8a8a', 1.2, 'critical region border');
  }
  sw('url(#hatch)', '#888', 0.6, 'infeasible', 'no input sequence meets the limits');
  sw(HOLE_FILL, HOLE_STROKE, 2, 'HOLE (ringed)', 'feasible, but no region: no law');
  if (opts.trajectories?.length) {
    push(`<line x1="${lx}" x2="${lx + 22}" y1="${ly - 4}" y2="${ly - 4}" stroke="#111" stroke-width="1.6"/>`);
    push(`<circle cx="${lx + 3}" cy="${ly - 4}" r="4" fill="#fff" stroke="#111" stroke-width="1.6"/>`);
    push(`<text x="${lx + 30}" y="${ly}">closed loop under the table law</text>`);
    ly += 15;
    push(`<text x="${lx + 30}" y="${ly}" fill="#555" font-size="11">○ start · × left every region</text>`);
    ly += 14;
    if (spec.fixed.length > 2) {
      push(`<text x="${lx + 30}" y="${ly}" fill="#555" font-size="11">drawn projected onto this plane</text>`);
      ly += 14;
    }
    ly += 8;
  }
  if (opts.heat && heatRange) {
    push(`<text x="${lx}" y="${ly}" font-weight="bold">${esc(opts.heat.label)}</text>`);
    ly += 8;
    const bw = 180;
    const gid = 'heatbar';
    const stops = Array.from({ length: 11 }, (_, k) => `<stop offset="${k * 10}%" stop-color="${heatInterpolator(k / 10)}"/>`).join('');
    push(`<defs><linearGradient id="${gid}">${stops}</linearGradient></defs>`);
    push(`<rect class="heat-scale" data-min="${heatRange[0]}" data-max="${heatRange[1]}" x="${lx}" y="${ly}" width="${bw}" height="12" fill="url(#${gid})" stroke="#666" stroke-width="0.5"/>`);
    const hs = scaleLinear().domain(heatRange).range([lx, lx + bw]);
    for (const t of hs.ticks(4)) {
      push(`<line x1="${hs(t).toFixed(1)}" x2="${hs(t).toFixed(1)}" y1="${ly + 12}" y2="${ly + 16}" stroke="#333"/>`);
      push(`<text x="${hs(t).toFixed(1)}" y="${ly + 28}" text-anchor="middle" font-size="11">${esc(hs.tickFormat(4)(t))}</text>`);
    }
    ly += 46;
  }
  push(`</g>`);

  // caution
  push(
    `<text x="${m.left}" y="${H - 14}" fill="#666" font-size="10.5">Analysis aid only: validate the controller in simulation and hardware-in-the-loop, keep an independent safety layer, and handle θ outside every region.</text>`,
  );
  push(`</svg>`);
  return { svg: out.join('\n') + '\n', colours: colour, neighbours, holeCount };
}
