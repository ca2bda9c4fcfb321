/**
 * The canonical form's neighbours step (`canonicalNeighbours`, src/mpqp/canonical.ts): its cost
 * with the LP-free pair decisions of src/mpqp/facet-pairs.ts against every pair by its Chebyshev
 * LP (`certificates: false`), paired in this process, CPU seconds (process.cpuUsage, so the other
 * jobs on the machine weigh less than on wall time), alternated new, old, new, old, … on the same
 * regions. Per problem: regions, the exploration's CPU seconds (once), pair tests, how they were
 * decided (accepted by an interior point, rejected by a slab or by the facets' proved boxes, left
 * to an LP), the median CPU seconds of each way, their ratio, the neighbours step as a share of the
 * exploration, and whether the lists are identical (they must be); then the twin facets paired
 * first (`TWINS_FROM`), and the same step with no twins sought (`twinsFrom: Infinity`): its pair
 * tests, CPU seconds and the ratio to the default.
 * Problems: boom-4d-n8 (complete), mixer-5d-n10 bounded by TESSERA_BENCH_CANONICAL_REGIONS
 * regions (default 4 000; bounded by a region count, not a time, so every run has the same
 * regions), crane-trolley-4d from examples/, and the 25-channel bank of bigtable.bench.ts (3-D θ,
 * 6 868 regions, a plane arrangement: every facet has a twin). TESSERA_BENCH_REPS sets the pairs
 * (default 3).
 */
import { join } from 'node:path';
import { loadavg } from 'node:os';
import { loadProblem } from '../../src/problem/index.js';
import { buildMpqp } from '../../src/formulation/index.js';
import { solvePartition } from '../../src/mpqp/solve.js';
import { beginJoin, canonicalNeighbours, zeroNeighbourCounts } from '../../src/mpqp/canonical.js';
import { parseProblem } from '../../src/problem/read.js';
import { channelProblem } from './bigtable.bench.js';

const root = join(import.meta.dirname, '..', '..');
const reps = Number(process.env.TESSERA_BENCH_REPS ?? 3);
const mixerRegions = Number(process.env.TESSERA_BENCH_CANONICAL_REGIONS ?? 4000);

const cpu = (): number => {
  const u = process.cpuUsage();
  return (u.user + u.system) / 1e6;
};
const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)];

function one(name: string, file: string | { raw: unknown }, maxRegions?: number): void {
  const mpqp = buildMpqp(typeof file === 'string' ? loadProblem(file) : parseProblem(file.raw, name));
  const c0 = cpu();
  const p = solvePartition(mpqp, { maxRegions, lean: true });
  const explore = cpu() - c0;
  const join = beginJoin(mpqp, [p]);
  const times = { new: [] as number[], old: [] as number[], twinless: [] as number[] };
  let same = true;
  let first: string | null = null;
  let counts = zeroNeighbourCounts();
  let twinlessTests = 0;
  let lps = { new: 0, old: 0, twinless: 0 };
  for (let r = 0; r < reps; r++)
    for (const way of ['new', 'old', 'twinless'] as const) {
      const lp = { lps: 0, reference: false };
      const c = zeroNeighbourCounts();
      const t0 = cpu();
      const lists = canonicalNeighbours(mpqp, join.regions, join.boxes, lp, undefined, undefined, { counts: c, certificates: way === 'old' ? false : undefined, twinsFrom: way === 'twinless' ? Infinity : undefined });
      if (way === 'twinless') twinlessTests = c.tests;
      times[way].push(cpu() - t0);
      lps[way] = lp.lps;
      if (way === 'new') counts = c;
      const text = JSON.stringify(lists);
      if (first === null) first = text;
      else if (text !== first) same = false;
    }
  const tNew = median(times.new);
  const tOld = median(times.old);
  const tTwinless = median(times.twinless);
  console.log(
    `  ${name.padEnd(16)} ${String(join.regions.length).padStart(6)} ${explore.toFixed(1).padStart(8)} ${String(counts.tests).padStart(8)} ` +
      `${String(counts.accepted).padStart(7)} ${String(counts.rejected).padStart(7)} ${String(counts.boxes).padStart(6)} ${String(lps.new).padStart(6)} ${String(lps.old).padStart(7)} ` +
      `${tNew.toFixed(2).padStart(7)} ${tOld.toFixed(2).padStart(7)} ${(tOld / tNew).toFixed(2).padStart(6)}× ${((100 * tNew) / explore).toFixed(0).padStart(5)} % ${((100 * tOld) / explore).toFixed(0).padStart(5)} %   ` +
      `${String(counts.twins).padStart(6)} ${String(twinlessTests).padStart(9)} ${tTwinless.toFixed(2).padStart(7)} ${(tTwinless / tNew).toFixed(2).padStart(6)}×   ${same ? 'same' : 'DIFFERENT'}`,
  );
}

/** Print the table. */
export async function run(): Promise<void> {
  console.log(`canonical form, neighbours step: LP-free decisions (new) against one LP per pair (old), CPU s, median of ${reps} alternated pairs; load ${loadavg().map((x) => x.toFixed(1)).join(' ')}`);
  console.log('  problem          regions explore    tests  accept  reject  boxes LPs new LPs old   s new   s old  ratio  new/explore old/explore   twins  tests w/o  s w/o  ratio   lists');
  one('boom-4d-n8', join(root, 'test', 'fixtures', 'scale', 'boom-4d-n8.json'));
  one('crane-trolley-4d', join(root, 'examples', 'crane-trolley-4d.json'));
  one(`mixer-5d-n10`, join(root, 'test', 'fixtures', 'scale', 'mixer-5d-n10.json'), mixerRegions);
  // the channel bank of bigtable.bench.ts: a plane arrangement, every facet with a twin across
  one('channels-25-3d', { raw: channelProblem(25, 3) });
}
