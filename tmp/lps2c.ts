import { join } from 'node:path';
import { loadProblem } from '../src/problem/index.js';
import { buildMpqp } from '../src/formulation/index.js';
import { solvePartition, witnessKey, uncoveredFacetPiece } from '../src/mpqp/solve.js';
import { joinPartitions } from '../src/mpqp/canonical.js';
const mpqp = buildMpqp(loadProblem(join('test', 'fixtures', 'problems', 'two-carts-4d.json')));
const c = joinPartitions(mpqp, [solvePartition(mpqp)]);
let scale = 0; for (let j = 0; j < mpqp.ntheta; j++) scale = Math.max(scale, mpqp.box.upper[j] - mpqp.box.lower[j]);
const counts: number[] = [];
for (const [r, R] of c.regions.slice(0, 40).entries()) R.facets.forEach((fi, k) => {
  if (fi.kind === 'box') return;
  const lp = { lps: 0, reference: false };
  const t = performance.now();
  const res = uncoveredFacetPiece(c.regions, c.boxes!, r, k, scale, lp);
  counts.push(lp.lps);
  if (lp.lps > 1000 || res === 'undecided') console.log(r, k, lp.lps, typeof res === 'string' ? res : res ? 'piece' : 'covered', (performance.now() - t).toFixed(0), 'ms');
});
console.log('max', Math.max(...counts), 'facets', counts.length);
