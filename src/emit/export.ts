/**
 * The raw arrays of a build for other toolchains: one JSON object, or one CSV file per array. They
 * carry the language-neutral layout (element kinds and value ranges), no target's types or rules.
 */
import type { LayoutArray } from './layout.js';
import { LAYOUT_TEXT, LAYOUT_TEXT_BOXTREE, LAYOUT_TEXT_CENTRED, LAYOUT_TEXT_GRID, LAYOUT_TEXT_HEAD } from './layout.js';

export interface ExportMeta {
  precision: string;
  search: string;
  ntheta: number;
  nu: number;
  regionCount: number;
  root: number;
  maxDepth: number;
  slack: number;
  /** levels of the plane descent's head (node_head_plane, node_head_ref); absent or 0 without one */
  headLevels?: number;
}

/**
 * All arrays of a build as one JSON document: the build's dimensions, then per array its element
 * kind, value range, count and values (language-neutral; no target's types or padding).
 */
export function arraysToJson(ar: ExportMeta, layout: LayoutArray[], extra: Record<string, unknown> = {}): string {
  const arrays: Record<string, Omit<LayoutArray, 'name'>> = {};
  for (const { name, ...rest } of layout) arrays[name] = rest;
  const meta = {
    precision: ar.precision,
    search: ar.search,
    ntheta: ar.ntheta,
    nu: ar.nu,
    regions: ar.regionCount,
    root: ar.root,
    maxDepth: ar.maxDepth,
    ...((ar.headLevels ?? 0) > 0 ? { headLevels: ar.headLevels } : {}),
    slack: ar.slack,
    layout: [LAYOUT_TEXT, ar.search === 'boxtree' ? LAYOUT_TEXT_BOXTREE : ar.search === 'grid' ? LAYOUT_TEXT_GRID : '', (ar.headLevels ?? 0) > 0 ? LAYOUT_TEXT_HEAD : '', layout.some((a) => a.name === 'law_c') ? LAYOUT_TEXT_CENTRED : ''].filter(Boolean).join('; '),
    ...extra,
  };
  // 64-bit fixed-point constants exceed 2^53: written as decimal strings so that they stay exact
  return JSON.stringify({ ...meta, arrays }, (_k, v) => (typeof v === 'bigint' ? (Number.isSafeInteger(Number(v)) ? Number(v) : v.toString()) : v)) + '\n';
}

/** [name, csv text] per array: header "index,value", reals with 17 significant digits; an empty array is a header alone. */
export function arraysToCsv(layout: LayoutArray[]): [string, string][] {
  return layout.map((s) => [s.name, 'index,value\n' + s.values.map((v, i) => `${i},${s.kind === 'f-real' ? Number(v).toPrecision(17) : String(v)}\n`).join('')]);
}
