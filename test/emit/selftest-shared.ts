/**
 * Generated C against the TypeScript evaluators: every example and a synthetic partition, float
 * and double, tree and sequential, compiled with gcc's strict C99 flags; a generated self-test
 * evaluates ≥ 10 000 seeded points. References: locateSequential/applyAffine of src/table (the
 * table's own double law) and locateTree; the float build is checked against the exact IEEE
 * single-precision emulation (Math.fround per operation, exact by IEEE 754 — common practice)
 * and against the single-precision certificate.
 */
import { describe, expect, it } from 'vitest';
import { applyAffine, locateSequential, regionContains } from '../../src/table/table.js';
import { locateTree } from '../../src/partition/tree.js';
import { emitC, treeForTable } from '../../src/emit/index.js';
import { emitSelfTest } from '../../src/emit/targets/c.js';
import { evaluateArrays } from '../../src/emit/arrays.js';
import { sampleBox } from '../../src/emit/sample.js';
import { certifyFloat, facetPoints } from '../../src/check/certify.js';
import type { TableFile } from '../../src/table/format.js';
import { TREE_EXAMPLES, compile, exampleTable, run } from './helpers.js';
import { arrangementTable } from './synthetic.js';

const N_POINTS = 10000;

function testPoints(table: TableFile): number[][] {
  // seeded uniform sample plus up to 2000 facet points (just inside / outside every facet)
  const facet = facetPoints(table);
  const step = Math.max(1, Math.floor(facet.length / 2000));
  return [...sampleBox(table.box, N_POINTS, 11), ...facet.filter((_, i) => i % step === 0)];
}

function parseOutput(stdout: string, nu: number): { region: number; u: number[] }[] {
  const lines = stdout.trim().split('\n');
  const summary = lines.pop()!;
  expect(summary).toMatch(/^selftest: \d+ points, 0 mismatches$/);
  return lines.map((l) => {
    const f = l.split(' ');
    return { region: Number(f[1]), u: f.slice(2, 2 + nu).map(Number) };
  });
}

export function checkTable(name: string, table: TableFile, precision: 'float' | 'double'): void {
  describe(name, () => {
    const points = testPoints(table);
    const tree = treeForTable(table);
    for (const search of ['tree', 'sequential'] as const) {
      if (precision === 'double') it(`${search}, double: C equals the TypeScript law bit for bit on ${points.length} points`, () => {
        const r = emitC(table, { precision: 'double', search, prefix: 'law', tree });
        const expected = points.map((p) => evaluateArrays(r.arrays, p));
        const { exe } = compile('selftest', { 'law.h': r.header, 'law.c': r.source, 'law_selftest.c': emitSelfTest(r.arrays, 'law', points, expected) }, ['law.c', 'law_selftest.c']);
        const res = run(exe);
        expect(res.status).toBe(0);
        const out = parseOutput(res.stdout, table.dims.nu);
        expect(out.length).toBe(points.length);
        let located = 0;
        out.forEach((o, i) => {
          // reference: the table's own evaluators (sequential search / locateTree, then applyAffine)
          // (sequential search as the C does it: first fit in index order within tol.inside)
          const ref = search === 'tree' ? locateTree(r.tree!, points[i], table.regions) : table.regions.findIndex((g) => regionContains(g, points[i]));
          expect(o.region).toBe(ref);
          if (ref >= 0) {
            located++;
            const u = applyAffine(table.regions[ref].law, points[i]);
            for (let j = 0; j < u.length; j++) expect(o.u[j]).toBe(u[j]);
          } else for (const v of o.u) expect(v).toBe(12345); // u untouched on −1
        });
        expect(located).toBeGreaterThan(points.length / 2);
      }, 60000);
      if (precision === 'float') it(`${search}, float: C equals the exact single-precision emulation and stays within the certificate`, () => {
        const r = emitC(table, { precision: 'float', search, prefix: 'law', tree });
        const expected = points.map((p) => evaluateArrays(r.arrays, p));
        const cert = certifyFloat(table, r.arrays, { samples: 0, extraPoints: points });
        const { exe } = compile('selftest-f', { 'law.h': r.header, 'law.c': r.source, 'law_selftest.c': emitSelfTest(r.arrays, 'law', points, expected) }, ['law.c', 'law_selftest.c']);
        const res = run(exe);
        expect(res.status).toBe(0);
        const out = parseOutput(res.stdout, table.dims.nu);
        let maxDiff = 0;
        out.forEach((o, i) => {
          expect(o.region).toBe(expected[i].region);
          if (o.region < 0) return;
          o.u.forEach((v, j) => expect(Math.fround(v)).toBe(expected[i].u![j]));
          // the double law at the float θ the build receives, as the certificate now compares (changed
          // on purpose: θ's own rounding to float is the caller's quantisation, reported apart)
          const pf = points[i].map(Math.fround);
          const rd = locateSequential(table.regions, pf);
          if (rd >= 0) {
            const ud = applyAffine(table.regions[rd].law, pf);
            ud.forEach((v, j) => (maxDiff = Math.max(maxDiff, Math.abs(Math.fround(o.u[j]) - v))));
          }
        });
        expect(maxDiff).toBeLessThanOrEqual(cert.maxAbsDiff);
        expect(maxDiff).toBeGreaterThan(0); // single precision does round somewhere
      }, 60000);
    }
  });
}

export function checkAll(precision: 'float' | 'double'): void {
  for (const ex of TREE_EXAMPLES) checkTable(`example ${ex}`, exampleTable(ex).table, precision);
  checkTable('synthetic arrangement, 3-D θ, 2 inputs', arrangementTable({ lower: [-2, -1, -1], upper: [2, 1, 1], planes: 7, seed: 5, nu: 2 }), precision);
}
