/**
 * Best fit with early exit, float and fixed point: the evaluator (and through the C self-tests the
 * generated code) stops at a candidate whose largest slack-free residual is ≤ fitSure. The answer
 * must be the best fit as the layout text defines it — among the regions whose every row holds
 * within the region's slack, the smallest largest residual, ties to the lowest index — which this
 * file applies literally to the build's arrays: IEEE single precision by Math.fround (IEEE 754,
 * common practice), fixed point by exact BigInt integer arithmetic. On 20 000 seeded points and the
 * points pushed just inside/outside every facet, 2-D to 6-D.
 */
import { describe, expect, it } from 'vitest';
import { buildArrays, evaluateArrays, type EmitArrays } from '../../src/emit/arrays.js';
import { buildFixed, evaluateFixed, quantizeTheta, type FixedBuild } from '../../src/emit/fixed.js';
import { sampleBox } from '../../src/emit/sample.js';
import { facetPoints } from '../../src/check/certify.js';
import type { TableFile } from '../../src/table/format.js';
import { EXAMPLES, exampleTable } from './helpers.js';
import { arrangementTable } from './synthetic.js';

/** Best fit of a float sequential build, written out from the layout text (no early exit). */
function literalFloat(ar: EmitArrays, theta: number[]): number {
  const n = ar.ntheta;
  const f = Math.fround;
  const t = theta.map(f);
  let best = -1;
  let bestRes = 0;
  for (let r = 0; r < ar.regionCount; r++) {
    const d = t.map((v, j) => f(v - ar.lawC[r * n + j]));
    let worst = -Infinity;
    let ok = true;
    for (let i = ar.regionRowStart[r]; i < ar.regionRowStart[r + 1]; i++) {
      let s = f(ar.regionA[i * n] * d[0]);
      for (let j = 1; j < n; j++) s = f(s + f(ar.regionA[i * n + j] * d[j]));
      const res = f(s - ar.regionB[i]);
      if (!(res <= ar.regionSlack[r])) ok = false;
      worst = Math.max(worst, res);
    }
    if (ok && (best < 0 || worst < bestRes)) {
      best = r;
      bestRes = worst;
    }
  }
  return best;
}

/** Best fit of a fixed sequential build, written out from the layout text with exact integers. */
function literalFixed(b: FixedBuild, theta: number[]): number {
  const n = b.ntheta;
  const tq = quantizeTheta(b, theta);
  if (!tq || tq.some((v, j) => v < b.thetaLo[j] || v > b.thetaHi[j])) return -1;
  let best = -1;
  let bestRes = 0n;
  for (let r = 0; r < b.regionCount; r++) {
    let worst: bigint | null = null;
    let ok = true;
    for (let i = b.regionRowStart[r]; i < b.regionRowStart[r + 1]; i++) {
      let s = 0n;
      for (let j = 0; j < n; j++) s += b.regionA[i * n + j] * tq[j];
      const res = s - b.regionB[i];
      if (res > b.regionSlack[r]) ok = false;
      if (worst === null || res > worst) worst = res;
    }
    if (ok && worst !== null && (best < 0 || worst < bestRes)) {
      best = r;
      bestRes = worst;
    }
  }
  return best;
}

const TABLES: [string, () => TableFile][] = [
  ...EXAMPLES.filter((e) => e !== 'crane-trolley-4d.json').map((e): [string, () => TableFile] => [`example ${e}`, () => exampleTable(e).table]),
  ...[2, 3, 4, 5, 6].map((n): [string, () => TableFile] => [
    `synthetic ${n}-D arrangement`,
    () => arrangementTable({ lower: new Array(n).fill(-1), upper: new Array(n).fill(1), planes: n <= 3 ? 10 : 7, seed: 60 + n, nu: 1 }),
  ]),
];

for (const [name, get] of TABLES)
  describe(`${name}: best fit with early exit`, () => {
    it('float and q31/q15 sequential builds: the same region as the literal best fit on 20 000 seeded points and every facet point', () => {
      const table = get();
      const pts = [...sampleBox(table.box, 20000, 91), ...facetPoints(table)];
      const ar = buildArrays(table, 'float', 'sequential', null);
      expect(ar.fitSure).toBeLessThan(0);
      let exits = 0;
      for (const p of pts) {
        const got = evaluateArrays(ar, p).region;
        expect(got).toBe(literalFloat(ar, p));
        if (got >= 0) exits++;
      }
      expect(exits).toBeGreaterThan(pts.length / 4);
      for (const format of ['q31', 'q15'] as const) {
        const b = buildFixed(table, format, 'sequential', null);
        expect(b.fitSure).toBeLessThan(0n);
        const sub = pts.filter((_, i) => i % 4 === 0);
        for (const p of sub) expect(evaluateFixed(b, p).region).toBe(literalFixed(b, p));
      }
    }, 600000);
  });
