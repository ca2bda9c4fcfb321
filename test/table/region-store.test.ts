import { describe, expect, it } from 'vitest';
import { join } from 'node:path';
import { loadProblem, solveProblem } from '../../src/index.js';
import { REGION_TEXT, RegionBatch, RegionStore, regionJson, renderRegion, skipPacked, type PackedRegions, type RegionWithText } from '../../src/table/region-store.js';
import type { CriticalRegion } from '../../src/mpqp/types.js';

// Reference: the regions given to the store themselves. What comes back must be the same object
// tree: the same keys in the same order and every number the same double (Object.is, so −0 and
// NaN count), checked by node's own deep equality (`toStrictEqual`) and by the JSON text (what a
// table file holds). Common practice for a lossless container: a round trip is the identity.
const examples = join(import.meta.dirname, '..', '..', 'examples');

function sameBits(a: unknown, b: unknown): boolean {
  if (typeof a === 'number') return typeof b === 'number' && Object.is(a, b);
  if (Array.isArray(a)) return Array.isArray(b) && a.length === b.length && a.every((x, i) => sameBits(x, b[i]));
  if (a && typeof a === 'object') {
    const ka = Object.keys(a);
    const kb = Object.keys(b as object);
    return ka.join() === kb.join() && ka.every((k) => sameBits((a as Record<string, unknown>)[k], (b as Record<string, unknown>)[k]));
  }
  return a === b;
}

/** A hand-made region whose numbers are the edge cases of a double: −0, NaN, ±∞, the least subnormal, the largest finite. */
function oddNumbersRegion(): CriticalRegion {
  return {
    id: 7,
    activeSet: [0, 3],
    A: [[-0, 1], [1, NaN]],
    b: [Infinity, -Infinity],
    facets: [{ kind: 'primal', row: 2, neighbours: [4, 9] }, { kind: 'box', row: 1, neighbours: [] }],
    chebyshev: { center: [-0, 5e-324], radius: 1.7976931348623157e308 },
    law: { F: [[1, -0]], g: [-0] },
  };
}

describe('RegionStore', () => {
  for (const [file, lean] of [['positioning-axis.yaml', false], ['positioning-axis.yaml', true]] as const)
    it(`gives back every region of ${file} (${lean ? 'lean' : 'full'}) as it was`, () => {
      const { table } = solveProblem(loadProblem(join(examples, file)), { lean });
      const store = new RegionStore();
      const boxes = table.regions.map((R) => ({ lo: R.chebyshev.center.map((c) => c - 1), hi: R.chebyshev.center.map((c) => c + 1) }));
      table.regions.forEach((R, i) => expect(store.add(R, boxes[i])).toBe(i));
      expect(store.length).toBe(table.regions.length);
      table.regions.forEach((R, i) => {
        const back = store.get(i);
        expect(back.region).toStrictEqual(R);
        expect(back.box).toStrictEqual(boxes[i]);
        expect(sameBits(back.region, R)).toBe(true);
        expect(JSON.stringify(back.region)).toBe(JSON.stringify(R));
        expect(back.region).not.toBe(R); // packed, not kept
      });
      // packed: a few bytes per number, far below the objects' heap
      expect(store.bytes).toBeGreaterThan(0);
    });

  it('gives back regions stored across several blocks (100 000 regions of ~30 numbers)', () => {
    const store = new RegionStore();
    const make = (k: number): CriticalRegion => ({
      id: k,
      activeSet: [k % 7, 10 + (k % 5)],
      A: [[1, k / 3], [-1, 0.5]],
      b: [k, -k / 7],
      facets: [{ kind: 'dual', row: k % 11, neighbours: k % 3 ? [k + 1] : [] }, { kind: 'primal', row: 3, neighbours: [] }],
      chebyshev: { center: [k / 9, -k], radius: 1 / (k + 1) },
      law: { F: [[k, 2]], g: [k / 13] },
    });
    const N = 100_000;
    for (let k = 0; k < N; k++) store.add(make(k), { lo: [k - 1, -k], hi: [k + 1, k] });
    for (const k of [0, 1, 34_999, 35_000, 50_001, N - 1]) {
      const back = store.get(k);
      expect(sameBits(back.region, make(k))).toBe(true);
      expect(sameBits(back.box, { lo: [k - 1, -k], hi: [k + 1, k] })).toBe(true);
    }
    expect(store.bytes).toBeGreaterThan(N * 100);
  });

  it('keeps −0, NaN, infinities and neighbour lists; a region of another shape is kept as it is', () => {
    const R = oddNumbersRegion();
    const odd = { ...R, extra: 1 } as CriticalRegion;
    const store = new RegionStore();
    store.add(R, { lo: [-1, -0], hi: [1, 2] });
    store.add(odd, { lo: [0, 0], hi: [1, 1] });
    const back = store.get(0);
    expect(sameBits(back.region, R)).toBe(true);
    expect(sameBits(back.box, { lo: [-1, -0], hi: [1, 2] })).toBe(true);
    expect(store.get(1).region).toBe(odd);
  });

  for (const lean of [false, true])
    it(`packs regions in one thread and adds them in another with the same bits (RegionBatch, ${lean ? 'lean' : 'full'})`, () => {
      // what a worker sends: the records' buffers transferred (structuredClone with transfer is the
      // postMessage algorithm, HTML standard); the store must give back what `add` of the objects does
      const { table } = solveProblem(loadProblem(join(examples, 'positioning-axis.yaml')), { lean });
      const boxes = table.regions.map((R) => ({ lo: R.chebyshev.center.map((c) => c - 1), hi: R.chebyshev.center.map((c) => c + 1) }));
      const odd = { ...table.regions[0], extra: 1 } as CriticalRegion;
      const batch = new RegionBatch();
      expect(batch.take()).toBeNull();
      expect(batch.push(odd, boxes[0])).toBe(false); // not packable: sent as the object
      // two batches, the second larger than the batch's first buffers
      const cut = 3;
      table.regions.slice(0, cut).forEach((R, i) => expect(batch.push(R, boxes[i])).toBe(true));
      const first = batch.take()!;
      table.regions.slice(cut).forEach((R, i) => expect(batch.push(R, boxes[cut + i])).toBe(true));
      const second = batch.take()!;
      expect(batch.take()).toBeNull();
      const sent = (p: PackedRegions): PackedRegions => structuredClone(p, { transfer: [p.ints.buffer as ArrayBuffer, p.floats.buffer as ArrayBuffer] });
      const store = new RegionStore();
      const direct = new RegionStore();
      for (const p of [sent(first), sent(second)]) {
        const at = { i: 0, f: 0 };
        while (at.i < p.ints.length) {
          // the cursor moved past each record by skipPacked (what the main thread does after a copy it keeps)
          const k = store.length;
          expect(store.addPacked(p, at)).toBe(k);
          skipPacked(p, at);
        }
        expect(at.f).toBe(p.floats.length);
      }
      table.regions.forEach((R, i) => direct.add(R, boxes[i]));
      expect(store.length).toBe(table.regions.length);
      expect(store.bytes).toBe(direct.bytes);
      table.regions.forEach((R, i) => {
        const back = store.get(i);
        expect(sameBits(back.region, R)).toBe(true);
        expect(sameBits(back.box, boxes[i])).toBe(true);
        expect(JSON.stringify(back.region)).toBe(JSON.stringify(direct.get(i).region));
      });
    });

  it('packs −0, NaN and infinities with the same bits (RegionBatch)', () => {
    const R = oddNumbersRegion();
    const batch = new RegionBatch();
    expect(batch.push(R, { lo: [-1, -0], hi: [1, 2] })).toBe(true);
    const p = structuredClone(batch.take()!);
    const store = new RegionStore();
    store.addPacked(p, { i: 0, f: 0 });
    expect(sameBits(store.get(0).region, R)).toBe(true);
    expect(sameBits(store.get(0).box, { lo: [-1, -0], hi: [1, 2] })).toBe(true);
  });

  for (const lean of [false, true])
    it(`renders a region's table text ahead as JSON.stringify writes it, through a renumbering spread (${lean ? 'lean' : 'full'})`, () => {
      // Reference: JSON.stringify (ECMAScript's serialisation, V8) of the region itself, what the
      // table writer wrote before; the text rendered ahead must give the same characters.
      const { table } = solveProblem(loadProblem(join(examples, 'positioning-axis.yaml')), { lean });
      const store = new RegionStore();
      table.regions.forEach((R, i) => {
        store.add(R, { lo: R.chebyshev.center, hi: R.chebyshev.center });
        store.setText(i, renderRegion(store.get(i).region));
      });
      table.regions.forEach((R, i) => {
        const back = store.get(i).region as RegionWithText;
        expect(back[REGION_TEXT]).toBeDefined();
        expect(regionJson(back)).toBe(JSON.stringify(R));
        // what the canonical form does: a spread copy with a new id and new neighbour lists keeps the text
        const renumbered: RegionWithText = { ...back, id: i + 1000, facets: back.facets.map((f, q) => ({ kind: f.kind, row: f.row, neighbours: [q, i] })) };
        expect(renumbered[REGION_TEXT]).toBe(back[REGION_TEXT]);
        expect(regionJson(renumbered)).toBe(JSON.stringify(renumbered));
        // keys of another shape: the text is not used
        const odd = { ...back, extra: 1 } as RegionWithText;
        expect(regionJson(odd)).toBe(JSON.stringify(odd));
        expect(JSON.stringify(odd)).toContain('"extra":1');
      });
      expect(renderRegion({ ...table.regions[0], extra: 1 } as CriticalRegion)).toBeNull();
    });

  for (const lean of [false, true])
    it(`gives a region whose text is set without its law, moves and value numbers (shed), and writes it as JSON.stringify wrote the whole region (${lean ? 'lean' : 'full'})`, () => {
      // Reference: JSON.stringify of the region as solved (ECMAScript's serialisation), and the
      // region itself for what the canonical form reads (A, b, facets, Chebyshev ball, box)
      const { table } = solveProblem(loadProblem(join(examples, 'positioning-axis.yaml')), { lean });
      const store = new RegionStore();
      const boxes = table.regions.map((R) => ({ lo: R.chebyshev.center.map((c) => c - 1), hi: R.chebyshev.center.map((c) => c + 2) }));
      table.regions.forEach((R, i) => {
        store.add(R, boxes[i]);
        // every other region without its text: given back whole, shed or not
        if (i % 2 === 0) store.setText(i, renderRegion(store.get(i).region));
      });
      table.regions.forEach((R, i) => {
        const { region, box } = store.get(i, true);
        expect(box).toStrictEqual(boxes[i]);
        expect(Object.keys(region)).toEqual(Object.keys(R));
        for (const k of ['id', 'activeSet', 'A', 'b', 'facets', 'chebyshev'] as const) expect(sameBits(region[k], R[k])).toBe(true);
        if (i % 2 === 0) {
          expect(region.law.F).toHaveLength(0);
          if (!lean) expect(region.moves!.F).toHaveLength(0);
        } else expect(sameBits(region, R)).toBe(true);
        // the canonical form's renumbering spread, then the table writer
        const copy: RegionWithText = { ...(region as RegionWithText), id: i + 5 };
        expect(regionJson(copy)).toBe(JSON.stringify({ ...R, id: i + 5 }));
      });
    });
});
