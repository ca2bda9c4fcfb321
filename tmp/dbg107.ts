import { readFileSync } from 'node:fs';
import { parseProblem, formulateFeasible } from '../src/index.js';
import { solvePartition } from '../src/mpqp/solve.js';
const raw = JSON.parse(readFileSync(process.argv[2], 'utf8'));
const f = formulateFeasible(parseProblem(raw, 'x.json'));
const p = f.mpqp;
console.log('nz', p.nz, 'nc', p.nc, 'nt', p.ntheta, 'box', Array.from(p.box.lower), Array.from(p.box.upper));
let Hmax = 0, Hmin = Infinity; for (let i = 0; i < p.nz; i++) { Hmax = Math.max(Hmax, p.H[i * p.nz + i]); Hmin = Math.min(Hmin, p.H[i * p.nz + i]); }
console.log('H diag range', Hmin, Hmax, 'F max', Math.max(...Array.from(p.F).map(Math.abs)), 'c max', Math.max(...Array.from(p.c ?? []).map(Math.abs)));
const t = performance.now();
const res = solvePartition(p, { timeLimit: Number(process.argv[3] ?? 5) });
console.log('regions', res.regions.length, 's', ((performance.now() - t) / 1000).toFixed(1), JSON.stringify(res.stats.causes), JSON.stringify(res.work), 'gaveUpAt', res.stats.gaveUpAt?.slice(0, 5));
import { solvePointQp } from '../src/mpqp/pointqp.js';
import { buildRegion } from '../src/mpqp/region.js';
const key = res.stats.gaveUpAt![0];
const [as, fs] = key.split(':');
const R = res.regions.find((r) => r.activeSet.join(',') === as)!;
const fi = Number(fs);
console.log('R', R.id, 'facets', R.facets.map((x, i) => `${i}:${x.kind}${x.row}[${x.neighbours}]`).join(' '), 'radius', R.chebyshev.radius);
console.log('facet row a', R.A[fi].map((x) => x.toFixed(4)), 'b', R.b[fi]);
// walk along the facet: points on it from the Chebyshev centre projected, step across
const c = R.chebyshev.center;
const a = R.A[fi];
let s = R.b[fi]; for (let j = 0; j < c.length; j++) s -= a[j] * c[j];
const onF = c.map((x, j) => x + s * a[j]);
for (const h of [1e-7, 1e-6, 1e-5, 1e-4, 1e-3, 1e-2]) {
  const th = onF.map((x, j) => x + h * a[j]);
  const q = solvePointQp(p, th);
  const lpE = { lps: 0, reference: false };
  const b = q.feasible ? buildRegion(p, q.activeSet, lpE) : null;
  let inside = '';
  if (b && b.ok) { let mx = -Infinity; for (let i = 0; i < b.region.A.length; i++) { let v = -b.region.b[i]; for (let j = 0; j < th.length; j++) v += b.region.A[i][j] * th[j]; mx = Math.max(mx, v); } inside = ` maxviol ${mx.toExponential(2)} radius ${b.region.chebyshev.radius.toExponential(2)} facets ${b.region.facets.map((x) => x.kind[0] + x.row).join(',')}`; }
  console.log('h', h, 'feasible', q.feasible, 'AS', q.activeSet?.join(','), b ? (b.ok ? 'built' + inside : 'fail ' + b.reason) : '');
}
const show = (X: any, name: string) => { console.log(name, X.activeSet.join(','), 'r', X.chebyshev.radius.toExponential(3), 'c', X.chebyshev.center.map((x: number) => x.toFixed(6)).join(' ')); X.A.forEach((row: number[], i: number) => console.log('   ', X.facets[i].kind[0] + X.facets[i].row, row.map((x) => x.toFixed(7)).join(' '), X.b[i].toFixed(9), 'nb', X.facets[i].neighbours.join(','))); };
show(R, 'R');
const S = res.regions.find((r) => r.activeSet.join(',') === '18,22,26,28,30,32');
if (S) show(S, 'S'); else console.log('S not in the partition');
for (const id of R.facets[5].neighbours) show(res.regions[id], 'nb' + id);
