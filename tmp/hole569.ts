import { readFileSync } from 'node:fs';
import { parseProblem, formulateFeasible } from '../src/index.js';
import { solvePointQp } from '../src/mpqp/pointqp.js';
import { buildRegion } from '../src/mpqp/region.js';
import { qpReference } from '../test/helpers/reference.js';
const raw = JSON.parse(readFileSync('/tmp/s28/fuzz/p569.json', 'utf8'));
const p = formulateFeasible(parseProblem(raw, 'x.json')).mpqp;
const table = JSON.parse(readFileSync('/tmp/s28/t569.json', 'utf8'));
const pts = [[0.629778, -0.904677, -0.0189391, 0.259218, -0.529447], [0.629729, -0.329148, -0.0283125, 0.259267, -1.22973], [0.628177, -0.913067, -0.0173731, 0.262963, -0.526856], [-0.813222, -0.575344, 0.315663, -0.26731, 0.613226]];
for (const th of pts) {
  const q = solvePointQp(p, th);
  const ref = qpReference(p, th);
  const b = q.feasible ? buildRegion(p, q.activeSet, { lps: 0, reference: false }) : null;
  const viol = table.regions.map((R: any, i: number) => { let mx = -Infinity; R.A.forEach((a: number[], k: number) => { let v = -R.b[k]; a.forEach((x, j) => (v += x * th[j])); mx = Math.max(mx, v); }); return [mx, i]; }).sort((x: any, y: any) => x[0] - y[0]).slice(0, 2);
  // G z - w - E th at quadprog's z: which rows are active
  const act: number[] = [];
  for (let i = 0; i < p.nc; i++) { let s = -p.w[i]; for (let j = 0; j < p.nz; j++) s += p.G[i * p.nz + j] * ref.z[j]; for (let j = 0; j < p.ntheta; j++) s -= p.E[i * p.ntheta + j] * th[j]; if (s > -1e-7) act.push(i); }
  console.log('QP', q.activeSet?.join(','), 'quadprog active', act.join(','), b ? (b.ok ? `built r=${b.region.chebyshev.radius.toExponential(2)} facets ${b.region.facets.map((x: any) => x.kind[0] + x.row).join(',')}` : `fail ${b.reason}`) : '', 'nearest', viol.map((v: any) => `${v[1]}:${v[0].toExponential(2)}:${table.regions[v[1]].activeSet.join(',')}`).join(' '));
  console.log('  in table?', table.regions.findIndex((R: any) => R.activeSet.join(',') === q.activeSet.join(',')));
}
