/**
 * Region colours: two polygons that share an edge and differ in the chosen key (law, active set
 * or region) never share a colour; polygons with the same key always share one, so a law that
 * spans several regions reads as one patch.
 */
import { hsl } from 'd3';
import { bbox, bboxOverlap, sharedEdgeLength, type Polygon } from '../partition/polygon.js';

/**
 * Our palette: twelve light, mid-saturation hues spaced around the wheel, none of them red
 * (red is kept for holes) and none grey (grey is kept for infeasible parts). Dark text and thin
 * dark borders stay readable on every one.
 */
export const REGION_PALETTE = [
  '#9cc3e6', // sky
  '#f3cf7a', // straw
  '#a8d5a2', // sage
  '#c9b3e3', // lavender
  '#f5b48c', // apricot
  '#86d0c8', // lagoon
  '#dcd97c', // pear
  '#b4bce9', // periwinkle
  '#e9b7d2', // orchid
  '#bfe08f', // lime
  '#9fd3ea', // ice
  '#e6c39d', // sand
];

export const HOLE_FILL = '#e8112d';
export const HOLE_STROKE = '#6b0010';
export const INFEASIBLE_FILL = '#e4e4e4';
export const INFEASIBLE_HATCH = '#9a9a9a';

/** Colour for index k: the palette, then lighter/darker turns of it (all distinct strings). */
export function paletteColour(k: number): string {
  const P = REGION_PALETTE.length;
  if (k < P) return REGION_PALETTE[k];
  const base = hsl(REGION_PALETTE[k % P]);
  const turn = Math.floor(k / P);
  base.h = (base.h + 13 * turn) % 360;
  base.l = Math.max(0.45, Math.min(0.88, base.l + (turn % 2 ? -0.08 : 0.05) * Math.ceil(turn / 2)));
  return base.formatHex();
}

/** Adjacency (shared boundary of positive length) between polygons, as neighbour lists. */
export function adjacency(polys: Polygon[], eps: number): number[][] {
  const nb: number[][] = polys.map(() => []);
  const boxes = polys.map(bbox);
  for (let i = 0; i < polys.length; i++)
    for (let j = i + 1; j < polys.length; j++) {
      if (!bboxOverlap(boxes[i], boxes[j], eps)) continue;
      if (sharedEdgeLength(polys[i], polys[j], eps) > eps) {
        nb[i].push(j);
        nb[j].push(i);
      }
    }
  return nb;
}

/**
 * DSatur (Brélaz 1979): repeatedly colour the vertex whose neighbours already use the most
 * distinct colours (ties: most uncoloured neighbours, then lowest index). The colour given is the
 * least used one that no neighbour has among the first `spread` colours (so the palette is used
 * evenly instead of one hue flooding the map), else the smallest free colour beyond.
 */
export function dsatur(neighbours: number[][], spread = REGION_PALETTE.length): number[] {
  const n = neighbours.length;
  const colour = new Array<number>(n).fill(-1);
  const sat: Set<number>[] = neighbours.map(() => new Set());
  const used: number[] = new Array(spread).fill(0);
  for (let step = 0; step < n; step++) {
    let best = -1;
    let bestSat = -1;
    let bestDeg = -1;
    for (let v = 0; v < n; v++) {
      if (colour[v] >= 0) continue;
      const s = sat[v].size;
      const d = neighbours[v].reduce((a, u) => a + (colour[u] < 0 ? 1 : 0), 0);
      if (s > bestSat || (s === bestSat && d > bestDeg)) {
        best = v;
        bestSat = s;
        bestDeg = d;
      }
    }
    let c = -1;
    for (let q = 0; q < spread; q++) if (!sat[best].has(q) && (c < 0 || used[q] < used[c])) c = q;
    if (c < 0) {
      c = spread;
      while (sat[best].has(c)) c++;
    }
    colour[best] = c;
    used[c] = (used[c] ?? 0) + 1;
    for (const u of neighbours[best]) sat[u].add(c);
  }
  return colour;
}

/**
 * Colour index per polygon, one colour per key (equal laws look equal everywhere). When the
 * keys fit the palette each gets its own colour (largest total area first); otherwise the graph
 * of keys — two keys joined when some of their polygons share an edge — is coloured by DSatur.
 * Either way adjacent polygons with different keys never share a colour.
 */
export function colourByKey(
  polys: Polygon[],
  keys: string[],
  eps: number,
  weights?: number[],
): { colour: number[]; neighbours: number[][]; distinct: boolean } {
  const nb = adjacency(polys, eps);
  const keyList = [...new Set(keys)];
  const ki = new Map(keyList.map((k, i) => [k, i]));
  let keyColour: number[];
  let distinct: boolean;
  if (keyList.length <= REGION_PALETTE.length) {
    const w = keyList.map(() => 0);
    keys.forEach((k, i) => (w[ki.get(k)!] += weights?.[i] ?? 1));
    const order = keyList.map((_, i) => i).sort((a, b) => w[b] - w[a] || a - b);
    keyColour = new Array<number>(keyList.length);
    order.forEach((k, rank) => (keyColour[k] = rank));
    distinct = true;
  } else {
    const gnb: Set<number>[] = keyList.map(() => new Set());
    nb.forEach((list, i) =>
      list.forEach((j) => {
        const a = ki.get(keys[i])!;
        const b = ki.get(keys[j])!;
        if (a !== b) {
          gnb[a].add(b);
          gnb[b].add(a);
        }
      }),
    );
    keyColour = dsatur(gnb.map((x) => [...x]));
    distinct = false;
  }
  return { colour: keys.map((k) => keyColour[ki.get(k)!]), neighbours: nb, distinct };
}

/** A key that is equal for equal laws (rounded to 9 significant digits, far below plotting precision). */
export function lawKey(law: { F: number[][]; g: number[] }): string {
  const r = (v: number) => (Math.abs(v) < 1e-12 ? '0' : v.toPrecision(9));
  return law.F.map((row, i) => row.map(r).join(',') + '|' + r(law.g[i])).join(';');
}
