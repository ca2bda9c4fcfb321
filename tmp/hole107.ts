import { readFileSync } from 'node:fs';
import { parseProblem, formulateFeasible } from '../src/index.js';
import { solvePointQp } from '../src/mpqp/pointqp.js';
import { buildRegion } from '../src/mpqp/region.js';
const raw = JSON.parse(readFileSync('/tmp/s28/fuzz/bad-107.json', 'utf8'));
const p = formulateFeasible(parseProblem(raw, 'x.json')).mpqp;
const table = JSON.parse(readFileSync('/tmp/s28/b107c.json', 'utf8'));
const pts = [[1.52546, -0.065, -0.14, 0.00905033], [2.56, -0.065, -0.139987, 0.00905129], [1.75131, 0.0615729, -0.14, 0.00905052]];
for (const th of pts) {
  const q = solvePointQp(p, th);
  const b = q.feasible ? buildRegion(p, q.activeSet, { lps: 0, reference: false }) : null;
  // nearest table regions by max violation
  const viol = table.regions.map((R: any, i: number) => { let mx = -Infinity; R.A.forEach((a: number[], k: number) => { let v = -R.b[k]; a.forEach((x, j) => (v += x * th[j])); mx = Math.max(mx, v); }); return [mx, i]; }).sort((x: any, y: any) => x[0] - y[0]).slice(0, 3);
  console.log(th.join(' '), 'QP', q.feasible, q.activeSet?.join(','), b ? (b.ok ? `built r=${b.region.chebyshev.radius.toExponential(2)}` : `fail ${b.reason}`) : '', 'nearest', viol.map((v: any) => `${v[1]}:${v[0].toExponential(2)}:${table.regions[v[1]].activeSet.join(',')}`).join(' '));
}
