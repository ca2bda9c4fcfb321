/**
 * Region colours: a graph colouring of the slice's adjacency graph, so that two polygons that
 * share an edge and differ in the chosen key (law, active set or region) never share a colour.
 * Neighbours with the same key are merged first and get one colour, so a law that spans several
 * regions reads as one patch.
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
 * distinct colours (ties: most uncoloured neighbours, then lowest index), with the smallest free colour.
 */
export function dsatur(neighbours: number[][]): number[] {
  const n = neighbours.length;
  const colour = new Array<number>(n).fill(-1);
  const sat: Set<number>[] = neighbours.map(() => new Set());
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
    let c = 0;
    while (sat[best].has(c)) c++;
    colour[best] = c;
    for (const u of neighbours[best]) sat[u].add(c);
  }
  return colour;
}

/**
 * Colour index per polygon. Polygons adjacent with equal keys are merged into one vertex; the
 * merged graph is coloured by DSatur, so adjacent polygons with different keys always differ.
 */
export function colourByKey(polys: Polygon[], keys: string[], eps: number): { colour: number[]; neighbours: number[][] } {
  const nb = adjacency(polys, eps);
  const parent = polys.map((_, i) => i);
  const find = (i: number): number => {
    while (parent[i] !== i) i = parent[i] = parent[parent[i]];
    return i;
  };
  nb.forEach((list, i) =>
    list.forEach((j) => {
      if (keys[i] === keys[j]) {
        const a = find(i);
        const b = find(j);
        if (a !== b) parent[a] = b;
      }
    }),
  );
  const roots = [...new Set(polys.map((_, i) => find(i)))];
  const gi = new Map(roots.map((r, k) => [r, k]));
  const gnb: Set<number>[] = roots.map(() => new Set());
  nb.forEach((list, i) =>
    list.forEach((j) => {
      const a = gi.get(find(i))!;
      const b = gi.get(find(j))!;
      if (a !== b) {
        gnb[a].add(b);
        gnb[b].add(a);
      }
    }),
  );
  const gc = dsatur(gnb.map((s) => [...s]));
  return { colour: polys.map((_, i) => gc[gi.get(find(i))!]), neighbours: nb };
}

/** A key that is equal for equal laws (rounded to 9 significant digits, far below plotting precision). */
export function lawKey(law: { F: number[][]; g: number[] }): string {
  const r = (v: number) => (Math.abs(v) < 1e-12 ? '0' : v.toPrecision(9));
  return law.F.map((row, i) => row.map(r).join(',') + '|' + r(law.g[i])).join(';');
}
