/**
 * Cost report recomputed independently: array sizes from gcc's own sizeof on the generated file
 * and element counts parsed from its text; worst depth, multiply-adds and comparisons from the
 * parsed arrays by a separate walk. Element sizes of float/double (IEEE binary32/64) and of the
 * <stdint.h> fixed-width types are fixed by the C99 standard and IEEE 754 (common practice).
 */
import { describe, expect, it } from 'vitest';
import { emitC } from '../../src/emit/index.js';
import { arraysToJson } from '../../src/emit/export.js';
import { evaluateArrays, planeHeadLevels } from '../../src/emit/arrays.js';
import { emitSelfTest } from '../../src/emit/targets/c.js';
import { sampleBox } from '../../src/emit/sample.js';
import { locateSequential } from '../../src/table/table.js';
import type { TableFile } from '../../src/table/format.js';
import type { BoxTree } from '../../src/partition/boxtree.js';
import type { GridIndex } from '../../src/emit/grid.js';
import { compile, exampleTable, run } from './helpers.js';
import { arrangementTable, gridTable } from './synthetic.js';

const SIZE: Record<string, number> = { float: 4, double: 8, int16_t: 2, int32_t: 4, uint16_t: 2, uint32_t: 4 };

/** Parse every `static const TYPE P_name[N] = { … };` of the source. */
function parseArrays(source: string, prefix: string): Map<string, { ctype: string; declared: number; values: number[] }> {
  const out = new Map<string, { ctype: string; declared: number; values: number[] }>();
  const re = new RegExp(`static const (\\w+) ${prefix}_(\\w+)\\[(\\d+)\\] = \\{([^}]*)\\};`, 'g');
  for (const m of source.matchAll(re)) {
    const values = m[4].split(',').map((s) => parseFloat(s.trim().replace(/f$/, '')));
    out.set(m[2], { ctype: m[1], declared: Number(m[3]), values });
  }
  return out;
}

/** Rounding of a parsed C literal back to the build's precision. */
function round0(precision: 'float' | 'double'): (x: number) => number {
  return precision === 'float' ? Math.fround : (x: number) => x;
}

function checkCost(name: string, table: TableFile): void {
  describe(name, () => {
    for (const search of ['tree', 'capped', 'broad', 'boxtree', 'grid', 'sequential'] as const)
      for (const precision of ['float', 'double'] as const)
        it(`${search}, ${precision}: bytes, depth, multiply-adds and comparisons`, () => {
          const r = emitC(table, { precision, search, prefix: 'law' });
          const arrays = parseArrays(r.source, 'law');
          const rep = r.cost.bytes[precision];
          expect([...arrays.keys()].sort()).toEqual(rep.arrays.map((a) => a.name).sort());
          // sizeof as gcc sees it, on the generated file itself
          const probe = `#include <stdio.h>\n#include "law.c"\nint main(void)\n{\n${[...arrays.keys()]
            .map((k) => `    printf("${k} %lu\\n", (unsigned long)sizeof law_${k});`)
            .join('\n')}\n    (void)law_eval;\n    return 0;\n}\n`;
          const { exe } = compile('cost', { 'law.h': r.header, 'law.c': r.source, 'probe.c': probe }, ['probe.c']);
          const sizes = new Map(run(exe).stdout.trim().split('\n').map((l) => [l.split(' ')[0], Number(l.split(' ')[1])] as [string, number]));
          let total = 0;
          for (const a of rep.arrays) {
            const parsed = arrays.get(a.name)!;
            expect(parsed.values.length).toBe(parsed.declared);
            expect(a.count).toBe(parsed.declared);
            expect(a.bytes).toBe(parsed.declared * SIZE[parsed.ctype]);
            expect(sizes.get(a.name)).toBe(a.bytes);
            total += sizes.get(a.name)!;
          }
          expect(rep.total).toBe(total);
          // the JSON export carries the same numbers as the C arrays (C literals read back as numbers),
          // described by language-neutral element kinds and ranges instead of C types (changed on
          // purpose: the export is no longer C-specific)
          const exported = JSON.parse(arraysToJson(r.arrays, r.target.layout(r.arrays))).arrays as Record<string, { kind: string; range: [number, number]; values: number[] }>;
          for (const [name, a] of arrays) {
            const kind = exported[name].kind;
            expect(kind).toBe(a.ctype === precision ? 'f-real' : a.ctype.startsWith('u') ? (name === 'leaf_region' || name === 'leaf_first' || name === 'node_axis' ? 'u-index' : 'u-count') : 'i-index');
            expect(JSON.stringify(exported[name])).not.toMatch(/int16|int32|uint|float"|double"|ctype/);
            const back = precision === 'float' ? a.values.map(Math.fround) : a.values;
            // C has no empty arrays: an empty one is declared with one zero (a one-region grid's rest list)
            expect(exported[name].values).toEqual(exported[name].values.length === 0 && back.length === 1 && back[0] === 0 ? [] : back);
            expect(exported[name].range).toEqual([Math.min(...back), Math.max(...back)]);
          }

          // worst case from the parsed arrays
          const nt = table.dims.ntheta;
          const nu = table.dims.nu;
          const rowStart = arrays.get('region_row_start')!.values;
          const rows = (k: number) => rowStart[k + 1] - rowStart[k];
          let depth = 0;
          let macs = 0;
          let cmps = 0;
          // float builds locate by best fit: per row the test and the running maximum, per region the
          // comparison with the best so far and the early-exit test (`res <= LAW_FIT_SURE`, made when the
          // region becomes the best, so at most once per region; changed on purpose with the early
          // exit); double: first fit
          const bestFit = precision === 'float';
          const rowCmp = bestFit ? 2 : 1;
          const regionCmp = bestFit ? 2 : 0;
          expect(r.source.includes('_fit(')).toBe(bestFit);
          expect(r.source.includes('res <= LAW_FIT_SURE')).toBe(bestFit);
          if (search === 'sequential') {
            const all = rowStart[rowStart.length - 1];
            macs = all * nt + nu * nt;
            cmps = all * rowCmp + (rowStart.length - 1) * regionCmp;
          } else if (search === 'grid') {
            // no nodes: the grid's own cell counts, origin and scale; per cell one subtraction and one
            // multiplication per coordinate (counted as a multiply-add) and two comparisons, then every
            // candidate of the cell in full
            const g = r.locator as GridIndex;
            expect(arrays.has('node_left')).toBe(false);
            expect(arrays.get('grid_cells')!.values).toEqual(g.cells);
            expect(arrays.get('grid_lo')!.values.map(round0(precision))).toEqual(g.lower);
            expect(arrays.get('grid_scale')!.values.map(round0(precision))).toEqual(g.scale);
            // a cell's candidates: leaf_first (the region count when it has none), then its rest list
            // (changed on purpose: the first candidate is read beside the cell's offsets)
            const leafFirst = arrays.get('leaf_first')!.values;
            const leafStart = arrays.get('leaf_start')!.values;
            const leafRegion = arrays.get('leaf_region')!.values;
            expect(leafStart.length).toBe(g.cells.reduce((a, b) => a * b, 1) + 1);
            expect(leafFirst.length).toBe(leafStart.length - 1);
            const R = table.regions.length;
            for (let leaf = 0; leaf + 1 < leafStart.length; leaf++) {
              // above the region count: a cell deep inside region leafFirst − R − 1, taken without a test
              // (float builds only), so the cell and the law
              const sure = leafFirst[leaf] > R;
              if (sure) {
                expect(precision).toBe('float');
                const r0 = leafFirst[leaf] - R - 1;
                expect(g.leafRegions.slice(g.leafStart[leaf], g.leafStart[leaf + 1])).toContain(r0);
                macs = Math.max(macs, nt + nu * nt);
                cmps = Math.max(cmps, 2 * nt);
                continue;
              }
              const list = [...(leafFirst[leaf] < R ? [leafFirst[leaf]] : []), ...leafRegion.slice(leafStart[leaf], leafStart[leaf + 1])];
              // the same candidates as the grid's own cell list (order aside: the leaf lists most-often-found first)
              expect([...list].sort((a, b) => a - b)).toEqual(g.leafRegions.slice(g.leafStart[leaf], g.leafStart[leaf + 1]));
              if (leafFirst[leaf] >= table.regions.length) expect(leafStart[leaf + 1]).toBe(leafStart[leaf]);
              let rr = 0;
              for (const k of list) rr += rows(k);
              macs = Math.max(macs, nt + rr * nt + nu * nt);
              cmps = Math.max(cmps, 2 * nt + rr * rowCmp + list.length * regionCmp);
            }
            expect(r.source).not.toContain('LAW_DEPTH');
          } else {
            const left = arrays.get('node_left')?.values ?? [];
            const right = arrays.get('node_right')?.values ?? [];
            const leafStart = arrays.get('leaf_start')!.values;
            const leafRegion = arrays.get('leaf_region')!.values;
            // one inline plane (nθ coefficients and b) per node, and it is the tree's own hyperplane
            const round = precision === 'float' ? Math.fround : (x: number) => x;
            if (search === 'boxtree') {
              // one axis and one float split per node, the box tree's own
              const bt = r.locator as BoxTree;
              expect(arrays.get('node_axis')?.values ?? []).toEqual(bt.nodeAxis.length ? bt.nodeAxis : []);
              expect((arrays.get('node_split')?.values ?? []).map(round)).toEqual(bt.nodeSplit);
            } else {
              const plane = arrays.get('node_plane')?.values ?? [];
              expect(plane.length).toBe(left.length * (nt + 1));
              const tree = r.tree!;
              tree.nodeHyperplane.forEach((k, node) => {
                const got = plane.slice(node * (nt + 1), (node + 1) * (nt + 1)).map(round);
                expect(got).toEqual([...tree.hyperplanes.a[k], tree.hyperplanes.b[k]].map(round));
              });
            }
            const rootMatch = /#define LAW_ROOT \((-?\d+)\)/.exec(r.source)!;
            // a plane descent pass takes `levels` levels and sums one plane per node slot of them, read
            // off the C itself (the loop step and the sums declared in the loop; changed on purpose with
            // the multi-level descent)
            let levels = 1;
            let sumsPerPass = 1;
            // the head (capped and broad; added on purpose): its slots and levels read off the C, its
            // planes checked slot by slot against the tree walked from the root in heap order
            let headLevels = 0;
            let headSlots = 0;
            const headMatch = /\{\n {8}(?:float|double) s_\[(\d+)\];\n {8}uint32_t h_ = 0u;([\s\S]*?)ref = law_node_head_ref\[h_ - (\d+)u\];/.exec(r.source);
            if (headMatch) {
              expect(search === 'capped' || search === 'broad').toBe(true);
              headSlots = Number(headMatch[1]);
              headLevels = (headMatch[2].match(/h_ = 2u \* h_ \+ 2u - /g) ?? []).length;
              expect(headSlots).toBe(2 ** headLevels);
              expect(Number(headMatch[3])).toBe(headSlots - 1);
              const hp = arrays.get('node_head_plane')!.values.map(round);
              const href = arrays.get('node_head_ref')!.values;
              expect(hp.length).toBe(headSlots * (nt + 1));
              expect(href.length).toBe(headSlots);
              const tree = r.tree!;
              const walk = (k: number, ref: number, d: number): void => {
                if (d === headLevels) {
                  expect(href[k - (headSlots - 1)]).toBe(ref);
                  return;
                }
                const want = ref >= 0 ? [...tree.hyperplanes.a[tree.nodeHyperplane[ref]], tree.hyperplanes.b[tree.nodeHyperplane[ref]]].map(round) : new Array(nt + 1).fill(0);
                expect(Array.from({ length: nt + 1 }, (_, j) => hp[j * headSlots + k])).toEqual(want);
                walk(2 * k + 1, ref >= 0 ? left[ref] : ref, d + 1);
                walk(2 * k + 2, ref >= 0 ? right[ref] : ref, d + 1);
              };
              walk(0, Number(/#define LAW_ROOT \((-?\d+)\)/.exec(r.source)![1]), 0);
              // the unused slot: a zero plane
              expect(Array.from({ length: nt + 1 }, (_, j) => hp[j * headSlots + headSlots - 1])).toEqual(new Array(nt + 1).fill(0));
            } else expect(r.source).not.toContain('node_head');
            // every capped or broad tree of depth 3 or more has one, shallower than the tree
            expect(headMatch !== null).toBe((search === 'capped' || search === 'broad') && r.arrays.maxDepth >= 3);
            expect(headLevels).toBe(r.arrays.headLevels);
            if (headMatch) expect(headLevels).toBeLessThan(r.arrays.maxDepth);
            if (search !== 'boxtree' && left.length > 0 && r.source.includes('; d < LAW_DEPTH')) {
              const loop = /for \(d = (\d+)u; d < LAW_DEPTH && ref >= 0; d \+= (\d+)u\) \{([\s\S]*?)\n {4}\}/.exec(r.source)!;
              expect(Number(loop[1])).toBe(headLevels);
              levels = Number(loop[2]);
              sumsPerPass = (loop[3].match(/const (float|double) s_\w* = /g) ?? []).length;
              expect(sumsPerPass).toBe(2 ** levels - 1);
            }
            const stack: [number, number][] = [[Number(rootMatch[1]), 0]];
            while (stack.length) {
              const [ref, d] = stack.pop()!;
              if (ref >= 0) {
                stack.push([left[ref], d + 1], [right[ref], d + 1]);
                continue;
              }
              const leaf = -ref - 1;
              let rr = 0;
              for (let k = leafStart[leaf]; k < leafStart[leaf + 1]; k++) rr += rows(leafRegion[k]);
              depth = Math.max(depth, d);
              // a box-tree node compares one coordinate (no multiplication), a plane node costs nθ
              // the plane descent takes two levels per pass and sums three planes in each (the node's and
              // both children's, a leaf child's slot included; changed on purpose with the paired descent)
              // below a head of H levels: its 2^H sums and H comparisons, then the passes for the rest
              const passTests = search === 'boxtree' ? d : sumsPerPass * Math.ceil(Math.max(0, d - headLevels) / levels);
              const sums = passTests + headSlots;
              const tests = passTests + headLevels;
              macs = Math.max(macs, (search === 'boxtree' ? 0 : sums * nt) + rr * nt + nu * nt);
              cmps = Math.max(cmps, tests + rr * rowCmp + (leafStart[leaf + 1] - leafStart[leaf]) * regionCmp);
            }
            expect(r.source).toContain(`#define LAW_DEPTH ${depth}u`);
          }
          expect(r.cost.worstDepth).toBe(depth);
          expect(r.cost.worstMultiplyAdds).toBe(macs);
          expect(r.cost.worstComparisons).toBe(cmps);
        }, 30000);
  });
}

checkCost('example buck-duty-cycle', exampleTable('buck-duty-cycle.json').table);
checkCost('synthetic 3-D arrangement, 2 inputs', arrangementTable({ lower: [-1, -1, -1], upper: [1, 1, 1], planes: 6, seed: 9, nu: 2 }));
checkCost('one region (the tree is a single leaf)', gridTable(1, () => ({ F: [[0.5, -0.25]], g: [0.1] })));

describe('head levels of a plane descent', () => {
  it('takes the most levels whose 2^H planes fit 160 multiply-adds, at least 2 and below the depth', () => {
    // 2^H·nθ ≤ 160: 32·5, 16·10, 8·20, 4·40 (arithmetic)
    expect(planeHeadLevels(5, 20)).toBe(5);
    expect(planeHeadLevels(6, 20)).toBe(4);
    expect(planeHeadLevels(10, 20)).toBe(4);
    expect(planeHeadLevels(20, 20)).toBe(3);
    expect(planeHeadLevels(21, 20)).toBe(2);
    expect(planeHeadLevels(200, 20)).toBe(2);
    expect(planeHeadLevels(2, 40)).toBe(6);
    // below the tree's depth: the loop stays (it reads the node arrays)
    expect(planeHeadLevels(5, 5)).toBe(4);
    expect(planeHeadLevels(5, 3)).toBe(2);
    expect(planeHeadLevels(5, 2)).toBe(0);
    expect(planeHeadLevels(5, 0)).toBe(0);
  });

  it('a head one level short of a shallow tree: strict C99 compiles, equals the evaluator and sequential search', () => {
    // a 3-D arrangement whose capped tree is 6 levels deep: a head of 5 (a tree of depth 5 with a
    // head of 5 left the node arrays unread: -Werror=unused-const-variable, fixed on purpose)
    const table = arrangementTable({ lower: [-1, -1, -1], upper: [1, 1, 1], planes: 8, seed: 4 });
    const points = sampleBox(table.box, 2000, 17);
    for (const precision of ['float', 'double'] as const) {
      const r = emitC(table, { precision, search: 'capped', prefix: 'law' });
      expect(r.arrays.maxDepth).toBe(6);
      expect(r.arrays.headLevels).toBe(5);
      const expected = points.map((p) => evaluateArrays(r.arrays, p));
      const { exe } = compile('head-short', { 'law.h': r.header, 'law.c': r.source, 'law_selftest.c': emitSelfTest(r.arrays, 'law', points, expected) }, ['law.c', 'law_selftest.c']);
      const res = run(exe);
      expect(res.stdout.trim().split('\n').pop()).toBe(`selftest: ${points.length} points, 0 mismatches`);
      // double builds locate by first fit: every region as sequential search in index order finds it
      // (the table's own containment test, common practice for a partition)
      if (precision === 'double') points.forEach((p, i) => expect(expected[i].region).toBe(locateSequential(table.regions, p)));
    }
  });
});

describe('one-region table', () => {
  it('emits a tree of depth 0 that compiles and evaluates', () => {
    const table = gridTable(1, () => ({ F: [[0.5, -0.25]], g: [0.1] }));
    const r = emitC(table, { precision: 'double', search: 'tree', prefix: 'law' });
    expect(r.tree!.stats.maxDepth).toBe(0);
    const main = `#include <stdio.h>\n#include "law.h"\nint main(void)\n{\n    double t[2] = {0.5, 0.5};\n    double u[1] = {7.0};\n    int r = law_eval(t, u);\n    double o[2] = {1.5, 0.5};\n    int r2 = law_eval(o, u);\n    printf("%d %.17g %d\\n", r, u[0], r2);\n    return 0;\n}\n`;
    const { exe } = compile('one', { 'law.h': r.header, 'law.c': r.source, 'main.c': main }, ['law.c', 'main.c']);
    // hand computation: 0.1 + 0.5·0.5 − 0.25·0.5 = 0.225; (1.5, 0.5) is outside [0,1]², u untouched
    const [r1, u, r2] = run(exe).stdout.trim().split(' ');
    expect(Number(r1)).toBe(0);
    expect(Number(u)).toBeCloseTo(0.225, 15);
    expect(Number(r2)).toBe(-1);
  });
});

describe('non-finite θ (a failed sensor reading)', () => {
  // IEEE 754: every ordered comparison with NaN is false (common practice); the region test is
  // written as !(a·θ <= b) so that NaN and ±∞ that make a·θ NaN land in no region
  const table = gridTable(2, (i, j) => ({ F: [[1, 2]], g: [i + j] }));
  for (const search of ['tree', 'capped', 'broad', 'boxtree', 'grid', 'sequential'] as const)
    for (const precision of ['float', 'double'] as const)
      it(`${search}, ${precision}: returns −1 and leaves u untouched`, () => {
        const r = emitC(table, { precision, search, prefix: 'law' });
        const T = precision;
        const main = `#include <stdio.h>\n#include "law.h"\nint main(void)\n{\n    volatile ${T} zero = 0;\n    ${T} nan = zero / zero, inf = 1 / zero;\n    ${T} cases[4][2];\n    int k;\n    cases[0][0] = nan; cases[0][1] = 0.5;\n    cases[1][0] = 0.5; cases[1][1] = nan;\n    cases[2][0] = inf; cases[2][1] = 0.5;\n    cases[3][0] = -inf; cases[3][1] = inf;\n    for (k = 0; k < 4; ++k) {\n        ${T} u[1] = {7};\n        int reg = law_eval(cases[k], u);\n        printf("%d %g\\n", reg, (double)u[0]);\n    }\n    return 0;\n}\n`;
        const { exe } = compile('nan', { 'law.h': r.header, 'law.c': r.source, 'main.c': main }, ['law.c', 'main.c']);
        expect(run(exe).stdout.trim().split('\n')).toEqual(['-1 7', '-1 7', '-1 7', '-1 7']);
      });
});
