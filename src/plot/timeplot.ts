/**
 * SVG time plots of closed-loop runs (states, outputs, inputs against the step), written as a
 * string like the maps: d3 scales and ticks, d3-shape lines, the same fonts, frame and caution.
 * Limits are dashed dark-red lines, the reference a dashed black step line, the online QP's input
 * a thin dotted line over the table's input.
 */
import { line, scaleLinear } from 'd3';
import type { Limits, RunResult, SignalNames } from '../check/simulate.js';
import { esc } from './svg.js';
import { HOLE_STROKE } from './colour.js';

/** Run colours: darker than the region palette so that thin lines read on white. */
const SOFT_LIMIT = '#c76a00';
const RUN_COLOURS = ['#1f5f99', '#b8651b', '#2e7d32', '#6a3d9a', '#00838f', '#8d6e00', '#ad1457', '#455a64'];

export interface TimePlotOptions {
  title: string;
  names: SignalNames;
  limits: Limits;
  /** soft state/output limits (drawn dashed orange) */
  softLimits?: Pick<Limits, 'state' | 'output'>;
  /** tracked output indices, in reference order (empty without tracking) */
  tracked: number[];
  /** at most this many runs are drawn (the first ones) */
  maxRuns?: number;
  width?: number;
  /** a line under the title, e.g. the source of the runs */
  subtitle?: string;
  /** y = x (C = I, no disturbance): output panels without limits or reference would repeat the state panels */
  outputsAreStates?: boolean;
}

interface Panel {
  label: string;
  series: (r: RunResult) => { k: number; v: number }[];
  online?: (r: RunResult) => { k: number; v: number | null }[];
  reference?: (r: RunResult) => { k: number; v: number }[];
  lower: number | null;
  upper: number | null;
  soft?: boolean;
}

/** Time plots of simulated runs (outputs/states, inputs with their limits, region index) as one standalone SVG string. */
export function renderTimePlotSvg(runs: RunResult[], opts: TimePlotOptions): string {
  const { names, limits } = opts;
  const W = opts.width ?? 940;
  const ph = 120;
  const gap = 46;
  const m = { left: 78, top: 84, right: 200, bottom: 40 };
  const shown = runs.slice(0, opts.maxRuns ?? 8);
  const softBound = (kind: 'state' | 'output', i: number, side: 'lower' | 'upper') => {
    const v = opts.softLimits?.[kind]?.[side]?.[i];
    return v === undefined ? null : v;
  };
  const bound = (b: Limits['state'], i: number, side: 'lower' | 'upper') => {
    const v = b?.[side]?.[i];
    return v === undefined ? null : v;
  };
  const panels: Panel[] = [];
  names.states.forEach((s, i) =>
    panels.push({
      label: `state ${s}`,
      series: (r) => [...r.records.map((q) => ({ k: q.k, v: q.x[i] })), { k: r.records.length, v: r.final.x[i] }],
      lower: bound(limits.state, i, 'lower') ?? softBound('state', i, 'lower'),
      upper: bound(limits.state, i, 'upper') ?? softBound('state', i, 'upper'),
      soft: !!opts.softLimits?.state,
    }),
  );
  names.outputs.forEach((o, i) => {
    const ti = opts.tracked.indexOf(i);
    const lo = bound(limits.output, i, 'lower') ?? softBound('output', i, 'lower');
    const hi = bound(limits.output, i, 'upper') ?? softBound('output', i, 'upper');
    const hasLimit = lo !== null || hi !== null;
    if (ti < 0 && !hasLimit && opts.outputsAreStates) return;
    panels.push({
      label: `output ${o}`,
      series: (r) => [...r.records.map((q) => ({ k: q.k, v: q.y[i] })), { k: r.records.length, v: r.final.y[i] }],
      reference: ti >= 0 ? (r) => r.records.map((q) => ({ k: q.k, v: q.r[ti] })) : undefined,
      lower: lo,
      upper: hi,
      soft: !!opts.softLimits?.output,
    });
  });
  names.inputs.forEach((u, i) =>
    panels.push({
      label: `input ${u}`,
      series: (r) => r.records.map((q) => ({ k: q.k, v: q.u[i] })),
      online: (r) => r.records.map((q) => ({ k: q.k, v: q.uOnline ? q.uOnline[i] : null })),
      lower: bound(limits.input, i, 'lower'),
      upper: bound(limits.input, i, 'upper'),
    }),
  );
  const H = m.top + panels.length * (ph + gap) + m.bottom;
  const pw = W - m.left - m.right;
  const kMax = Math.max(1, ...shown.map((r) => r.records.length));
  const sx = scaleLinear().domain([0, kMax]).range([m.left, m.left + pw]);
  const out: string[] = [];
  const push = (s: string) => out.push(s);
  push(`<?xml version="1.0" encoding="UTF-8"?>`);
  push(`<svg xmlns="http://www.w3.org/2000/svg" width="${W}" height="${H}" viewBox="0 0 ${W} ${H}" font-family="DejaVu Sans, Liberation Sans, Arial, sans-serif" font-size="12">`);
  push(`<rect width="${W}" height="${H}" fill="#ffffff"/>`);
  push(`<text x="${m.left}" y="28" font-size="18" font-weight="bold">${esc(opts.title)}</text>`);
  push(`<text x="${m.left}" y="48" fill="#333">${esc(opts.subtitle ?? `${runs.length} closed-loop run${runs.length === 1 ? '' : 's'}${runs.length > shown.length ? `, the first ${shown.length} drawn` : ''}`)}</text>`);
  push(`<text x="${m.left}" y="66" fill="#555" font-size="11">solid: table law · dotted: online QP (quadprog) · dashed red: hard limit · dashed orange: soft limit · dashed black: reference</text>`);

  panels.forEach((p, pi) => {
    const top = m.top + pi * (ph + gap);
    const vals: number[] = [];
    for (const r of shown) {
      p.series(r).forEach((q) => vals.push(q.v));
      p.reference?.(r).forEach((q) => vals.push(q.v));
    }
    if (p.lower !== null) vals.push(p.lower);
    if (p.upper !== null) vals.push(p.upper);
    const finite = vals.filter(Number.isFinite);
    let lo = finite.length ? Math.min(...finite) : -1;
    let hi = finite.length ? Math.max(...finite) : 1;
    if (hi - lo < 1e-9) {
      lo -= 0.5;
      hi += 0.5;
    }
    const pad = 0.06 * (hi - lo);
    const sy = scaleLinear().domain([lo - pad, hi + pad]).range([top + ph, top]).nice();
    push(`<g class="panel" data-signal="${esc(p.label)}">`);
    push(`<rect x="${m.left}" y="${top}" width="${pw}" height="${ph}" fill="#ffffff" stroke="#222" stroke-width="1"/>`);
    for (const t of sy.ticks(4)) {
      const y = sy(t).toFixed(1);
      push(`<line x1="${m.left}" x2="${m.left + pw}" y1="${y}" y2="${y}" stroke="#ececec"/>`);
      push(`<text x="${m.left - 8}" y="${(+y + 4).toFixed(1)}" text-anchor="end">${esc(sy.tickFormat(4)(t))}</text>`);
    }
    for (const t of sx.ticks(10)) {
      const x = sx(t).toFixed(1);
      push(`<line x1="${x}" x2="${x}" y1="${top + ph}" y2="${top + ph + 4}" stroke="#222"/>`);
      push(`<text x="${x}" y="${top + ph + 16}" text-anchor="middle" font-size="10.5">${t}</text>`);
    }
    push(`<text x="${m.left + pw + 14}" y="${top + 16}" font-weight="bold">${esc(p.label)}</text>`);
    let ly = top + 34;
    for (const [b, side] of [
      [p.upper, 'upper'],
      [p.lower, 'lower'],
    ] as const) {
      if (b === null) continue;
      const y = sy(b).toFixed(1);
      const colour = p.soft ? SOFT_LIMIT : HOLE_STROKE;
      push(`<line class="${p.soft ? 'soft-limit' : 'limit'}" x1="${m.left}" x2="${m.left + pw}" y1="${y}" y2="${y}" stroke="${colour}" stroke-width="1.3" stroke-dasharray="6 4"/>`);
      push(`<text x="${m.left + pw + 14}" y="${ly}" fill="${colour}" font-size="11">${p.soft ? 'soft ' : ''}${side} limit ${esc(String(b))}</text>`);
      ly += 15;
    }
    const ln = line<{ k: number; v: number }>()
      .x((q) => sx(q.k))
      .y((q) => sy(q.v));
    shown.forEach((r, ri) => {
      const colour = RUN_COLOURS[ri % RUN_COLOURS.length];
      if (p.reference) {
        const ref = p.reference(r);
        const pts = ref.flatMap((q) => [q, { k: q.k + 1, v: q.v }]);
        push(`<path class="reference" d="${ln(pts)}" fill="none" stroke="#111" stroke-width="1.2" stroke-dasharray="4 3"/>`);
      }
      const s = p.series(r).filter((q) => Number.isFinite(q.v));
      push(`<path class="run" data-run="${r.run}" d="${ln(s)}" fill="none" stroke="${colour}" stroke-width="1.6" stroke-linejoin="round"/>`);
      if (p.online) {
        const on = p.online(r).filter((q): q is { k: number; v: number } => q.v !== null && Number.isFinite(q.v));
        if (on.length) push(`<path class="online" d="${ln(on)}" fill="none" stroke="#111" stroke-width="1" stroke-dasharray="1.5 2.5"/>`);
      }
      // steps where the table had no law: a red cross on the axis
      for (const q of r.records)
        if (q.region < 0) {
          const x = sx(q.k);
          const y = top + ph - 6;
          push(`<path class="no-region" d="M${x - 4},${y - 4}L${x + 4},${y + 4}M${x - 4},${y + 4}L${x + 4},${y - 4}" stroke="${HOLE_STROKE}" stroke-width="2"/>`);
        }
    });
    push(`</g>`);
  });
  push(`<text x="${m.left + pw / 2}" y="${H - 22}" text-anchor="middle" font-size="13" font-weight="bold">step k</text>`);
  push(
    `<text x="${m.left}" y="${H - 6}" fill="#666" font-size="10.5">Analysis aid only: validate the controller in simulation and hardware-in-the-loop, keep an independent safety layer, and handle θ outside every region.</text>`,
  );
  push(`</svg>`);
  return out.join('\n') + '\n';
}
