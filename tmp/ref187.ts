import { readFileSync } from 'node:fs';
import { parseProblem, formulateFeasible } from '../src/index.js';
import { qpReference, lpFeasibleReference } from '../test/helpers/reference.js';
const raw = JSON.parse(readFileSync('/tmp/s28/fuzz/p187.json', 'utf8'));
const mpqp = formulateFeasible(parseProblem(raw, 'x.json')).mpqp;
function rng(seed: number): () => number { let s = seed % 2147483647 || 1; return () => ((s = (s * 16807) % 2147483647), s / 2147483647); }
const rr = rng(188);
for (let k = 0; k < 1500; k++) {
  const th = Array.from(mpqp.box.lower, (l, j) => l + rr() * (mpqp.box.upper[j] - l));
  let t = performance.now(); qpReference(mpqp, th); const tq = performance.now() - t;
  process.stdout.write(`${k} qp ${tq.toFixed(1)} `);
  t = performance.now(); lpFeasibleReference(mpqp, th); console.log(`lp ${(performance.now() - t).toFixed(1)} ${th.join(',')}`);
}
