/**
 * Fixed-point C (q15, q31) on every example: compiled with gcc's strict C99 flags, integer-only
 * (no float/double token in the generated code), self-test bit for bit against the TypeScript
 * emulation, signed overflow absent at the extremes of the accepted θ box (gcc's
 * -fsanitize=signed-integer-overflow, an outside reference for "no overflow"), and the certificate
 * SAFE at its stated tolerance with the same-region error inside the proven rounding bound.
 * References: the table's own double law (locateSequential/applyAffine), gcc/UBSan, and the
 * rounding-error bound of a scaled integer dot product (each rounding ≤ ½ unit; common practice).
 */
import { describe, expect, it } from 'vitest';
import { execFileSync } from 'node:child_process';
import { join } from 'node:path';
import { emit, treeForTable } from '../../src/emit/index.js';
import { evaluateFixed, evaluateFixedQ, fixedPlaneMargin, type FixedBuild } from '../../src/emit/fixed.js';
import { certifyFixed } from '../../src/check/certify-fixed.js';
import { facetPoints } from '../../src/check/certify.js';
import { sampleBox } from '../../src/emit/sample.js';
import { applyAffine, locateSequential } from '../../src/table/table.js';
import type { TableFile } from '../../src/table/format.js';
import { TREE_EXAMPLES as EXAMPLES, STRICT, compile, exampleTable, run } from './helpers.js';
import { arrangementTable } from './synthetic.js';

function stripComments(c: string): string {
  return c.replace(/\/\*[\s\S]*?\*\//g, '').replace(/"[^"\n]*"/g, '""');
}

/** `continuous`: an MPC table (continuous law); the synthetic arrangement has an unrelated random law per cell. */
function check(name: string, table: TableFile, continuous = true): void {
  describe(name, () => {
    // the trees a fixed build gets from emit: regions within the format's θ rounding of a split go to both sides
    const tree15 = treeForTable(table, { margin: fixedPlaneMargin(table, 'q15'), boundaryBothSides: true });
    const tree31 = treeForTable(table, { margin: fixedPlaneMargin(table, 'q31'), boundaryBothSides: true });
    const facet = facetPoints(table);
    const step = Math.max(1, Math.floor(facet.length / 2000));
    const points = [...sampleBox(table.box, 10000, 17), ...facet.filter((_, i) => i % step === 0)];
    for (const precision of ['q15', 'q31'] as const)
      for (const search of ['tree', 'sequential'] as const)
        it(`${precision} ${search}: integer-only C, bit for bit with the emulation on ${points.length} points, no overflow at the box extremes`, () => {
          const r = emit<FixedBuild>(table, { lang: 'c', precision, search, prefix: 'law', tree: precision === 'q15' ? tree15 : tree31 });
          const b = r.arrays;
          for (const f of r.files) expect(stripComments(f.text)).not.toMatch(/\b(float|double)\b|[0-9]\.[0-9]|[0-9]e[+-]?[0-9]/);
          // the header states the scaling the caller must apply
          b.thetaFrac.forEach((t, j) => expect(r.header).toContain(`#define LAW_THETA_FRAC_${j} ${t}\n`));
          expect(r.header).toContain(`#define LAW_U_FRAC ${b.uFrac}\n`);
          const expected = points.map((p) => evaluateFixed(b, p));
          const st = r.target.selfTest(b, 'law', points, expected);
          const { exe } = compile('fixed', { 'law.h': r.header, 'law.c': r.source, [st.name]: st.text }, ['law.c', st.name]);
          const res = run(exe);
          expect(res.stdout).toMatch(/selftest: \d+ points, 0 mismatches\n$/);
          expect(res.status).toBe(0);
          // u_q printed by the C equals the emulation's integers, and located regions agree with it
          const lines = res.stdout.trim().split('\n').slice(0, -1);
          lines.forEach((l, i) => {
            const f = l.split(' ');
            expect(Number(f[1])).toBe(expected[i].region);
            if (expected[i].uq) expect(f.slice(2).map(BigInt)).toEqual(expected[i].uq);
          });
          expect(expected.filter((e) => e.region >= 0).length).toBeGreaterThan(points.length / 2);

          // extremes: every corner of the accepted integer box and the points just outside it, under UBSan
          const n = table.dims.ntheta;
          const corners: bigint[][] = [];
          for (let m = 0; m < 1 << n; m++) corners.push(b.thetaLo.map((lo, j) => ((m >> j) & 1 ? b.thetaHi[j] : lo)));
          const outside = [b.thetaLo.map((v, j) => (j === 0 ? v - 1n : v)), b.thetaHi.map((v, j) => (j === 0 ? v + 1n : v))];
          const ext = [...corners, ...outside];
          const extExpected = ext.map((q) => evaluateFixedQ(b, q));
          expect(extExpected.slice(corners.length).every((e) => e.region === -1)).toBe(true);
          const W = `int${b.wordBits}_t`;
          const main = `#include <stdio.h>\n#include "law.h"\nstatic const ${W} pts[${ext.length}][${n}] = {${ext.map((q) => `{${q.join(', ')}}`).join(', ')}};\nint main(void)\n{\n    unsigned i, j;\n    for (i = 0u; i < ${ext.length}u; ++i) {\n        ${W} u[LAW_NU];\n        int r = law_eval(pts[i], u);\n        printf("%d", r);\n        for (j = 0u; j < LAW_NU; ++j) {\n            printf(" %ld", r >= 0 ? (long)u[j] : 0L);\n        }\n        printf("\\n");\n    }\n    return 0;\n}\n`;
          const ub = compile('fixed-ub', { 'law.h': r.header, 'law.c': r.source, 'main.c': main }, ['law.c', 'main.c'], ['-fsanitize=signed-integer-overflow,shift', '-fno-sanitize-recover=all']);
          const out = run(ub.exe);
          expect(out.status).toBe(0);
          out.stdout
            .trim()
            .split('\n')
            .forEach((l, i) => {
              const f = l.split(' ');
              expect(Number(f[0])).toBe(extExpected[i].region);
              if (extExpected[i].uq) expect(f.slice(1).map(BigInt)).toEqual(extExpected[i].uq);
            });
        }, 120000);

    for (const precision of ['q15', 'q31'] as const)
      it(`${precision} certificate: ${continuous ? 'SAFE at its stated tolerance, ' : ''}no point lost, same-region error within the proven bound`, () => {
        const r = emit<FixedBuild>(table, { lang: 'c', precision, search: 'tree', prefix: 'law', tree: precision === 'q15' ? tree15 : tree31 });
        const cert = certifyFixed(table, r.arrays, { samples: 20000, seed: 1 });
        // a law that jumps across facets cannot be SAFE once the region-test margin relocates points;
        // the continuous MPC laws of the examples must be
        if (continuous) {
          expect(cert.verdict).toMatch(/^SAFE at tolerance/);
          expect(cert.safe).toBe(true);
        } else if (cert.relocated > 0) expect(cert.relocatedMaxLawDiff).toBeGreaterThan(cert.tolerance);
        expect(cert.lostInFixed).toBe(0);
        expect(cert.overflow.ok).toBe(true);
        expect(cert.maxAbsDiffSameRegion).toBeLessThanOrEqual(cert.lawErrorBound);
        expect(cert.maxAbsDiff).toBeGreaterThan(0);
        // the tolerance is 8 output LSBs: u LSB = 2^-uFrac, uFrac from the Q format and the law magnitudes
        expect(cert.tolerance).toBe(8 * 2 ** -r.arrays.uFrac);
        // independent recomputation of the error at the certificate's worst point from the double law
        if (cert.worstTheta) {
          const rd = locateSequential(table.regions, cert.worstTheta);
          const ud = applyAffine(table.regions[rd].law, cert.worstTheta);
          const uf = evaluateFixed(r.arrays, cert.worstTheta).u!;
          expect(Math.max(...ud.map((v, i) => Math.abs(v - uf[i])))).toBe(cert.maxAbsDiff);
        }
      }, 120000);
  });
}

for (const ex of EXAMPLES) check(`example ${ex}`, exampleTable(ex).table);
check('synthetic arrangement, 3-D θ, 2 inputs', arrangementTable({ lower: [-2, -1, -1], upper: [2, 1, 1], planes: 7, seed: 5, nu: 2 }), false);

describe('q31 keeps more accuracy than q15', () => {
  it('max error shrinks by at least 2^10 from q15 to q31 on an example', () => {
    const table = exampleTable(EXAMPLES[0]).table;
    const tree = treeForTable(table);
    const e = (p: 'q15' | 'q31') => certifyFixed(table, emit<FixedBuild>(table, { lang: 'c', precision: p, search: 'tree', prefix: 'law', tree }).arrays, { samples: 3000 }).maxAbsDiff;
    expect(e('q31') * 2 ** 10).toBeLessThan(e('q15'));
  }, 60000);
});

describe('gcc agrees that the code is integer-only', () => {
  it('compiles with -mgeneral-regs-only style check: no floating types in the object (host gcc, -Werror=double-promotion -Wfloat-conversion)', () => {
    const table = exampleTable(EXAMPLES[0]).table;
    const r = emit<FixedBuild>(table, { lang: 'c', precision: 'q15', search: 'tree', prefix: 'law' });
    const dir = compile('fixed-int', { 'law.h': r.header, 'law.c': r.source, 'main.c': 'int main(void) { return 0; }\n' }, ['law.c', 'main.c'], ['-Wfloat-conversion', '-Wdouble-promotion', '-Wfloat-equal']).dir;
    // the assembly has no floating-point instruction (x86-64 SSE scalar float/double ops)
    const asm = execFileSync('gcc', [...STRICT, '-S', '-o', '-', join(dir, 'law.c')], { encoding: 'utf8' });
    expect(asm).not.toMatch(/\b(cvt\w*s[sd]|adds[sd]|muls[sd]|subs[sd]|ucomis[sd]|comis[sd])\b/);
  });
});
