/**
 * Where to cut a box among threads: a cheap pilot that estimates, for each axis, how many regions
 * its mid-plane crosses, and a recursive bisection that prefers the axes crossing few.
 *
 * A region that straddles a cut between two sub-boxes is built (and partly covered) by both, so
 * the cut should cross as few regions as it can. How many it crosses depends strongly on the
 * axis: on a 4-D boom the mid-plane of one axis crosses 45 % of all regions and another's 2 %
 * (both cuts through the centre, both halves about equal). The pilot solves point QPs at
 * `samples` points of each axis's mid-plane (a Halton sequence in the other coordinates, so the
 * choice is repeatable) and counts the distinct active sets met: a plane meeting few regions
 * meets few distinct active sets. A plane that is almost entirely infeasible is not a good cut
 * either (the feasible set, and so all the work, lies on one side), so it scores worst.
 */
import type { MpqpProblem } from './types.js';
import { solvePointQp } from './pointqp.js';

type Box = { lower: ArrayLike<number>; upper: ArrayLike<number> };

const PRIMES = [2, 3, 5, 7, 11, 13, 17, 19, 23, 29, 31, 37, 41, 43, 47, 53, 59, 61, 67, 71, 73, 79, 83, 89, 97];

/** The i-th (i ≥ 1) term of the van der Corput sequence in base b, in [0, 1). */
function radicalInverse(i: number, b: number): number {
  let f = 1;
  let r = 0;
  while (i > 0) {
    f /= b;
    r += f * (i % b);
    i = Math.floor(i / b);
  }
  return r;
}

/** What the pilot found on one axis's mid-plane. */
export interface PlaneCount {
  axis: number;
  /** distinct active sets of the point QPs at the feasible samples */
  distinct: number;
  /** samples where the QP was feasible */
  feasible: number;
  samples: number;
}

/**
 * Point QPs at `samples` points of the plane θ_axis = centre of `box` (the other coordinates from
 * a Halton sequence over the box), counting the distinct active sets met. Deterministic.
 */
export function midPlaneCount(problem: MpqpProblem, box: Box, axis: number, samples: number): PlaneCount {
  const n = problem.ntheta;
  const theta = new Float64Array(n);
  const keys = new Set<string>();
  let feasible = 0;
  for (let k = 1; k <= samples; k++) {
    let d = 0;
    for (let a = 0; a < n; a++) {
      const lo = box.lower[a];
      const hi = box.upper[a];
      theta[a] = a === axis ? (lo + hi) / 2 : lo + (hi - lo) * radicalInverse(k, PRIMES[d++ % PRIMES.length]);
    }
    const r = solvePointQp(problem, theta, undefined, false);
    if (!r.feasible) continue;
    feasible++;
    keys.add(r.activeSet.join(','));
  }
  return { axis, distinct: keys.size, feasible, samples };
}

/**
 * Point QPs per mid-plane in the pilot that chooses the cut (`midPlaneCount`): 32 on a box of 1 or
 * 2 dimensions, 256 on more. A mid-plane of a 2-D box is a segment, which 32 points sample well
 * (glider-2d-n40: 22 vs 30 distinct, the same choice as at 64 and at 1024, 40 vs 127). In more
 * dimensions the count must not saturate: at 64 points nearly every feasible sample of boom-4d-n20's planes met an active set of
 * its own (27/51, 25/51, 34/57, 27/64 distinct/feasible), and the pilot cut across θ2, whose
 * mid-plane crosses 19.5 % of the 18 931 regions, instead of θ4 (1.3 %; both counted exactly on the
 * final table, each region's extent by LP): the 2-thread run built 22 622 candidates against 18 939
 * on one thread. At 256 points the counts are 68, 51, 73, 40 and θ4 is chosen (at 1024: 180, 137,
 * 124, 53, the order of the exact shares 36, 19.5, 8.9, 1.3 %); boom-4d-n8 and -n12 and the mixer
 * on half its box choose the same axis as at 64, the best by the exact shares. 4 × 256 point QPs
 * took 52 ms on one warm thread (boom-4d-n20).
 */
export const pilotSamples = (ntheta: number): number => (ntheta <= 2 ? 32 : 256);

/**
 * Weights of the axes for `splitBox` from the pilot's counts (one per axis, in axis order): the
 * axis whose mid-plane met the fewest distinct active sets gets weight 1, another best/its count;
 * a plane feasible at fewer than an eighth of its samples gets a weight below every other.
 */
export function cutWeights(counts: readonly PlaneCount[]): number[] {
  const score = counts.map((c) => (c.feasible * 8 < c.samples ? Infinity : Math.max(1, c.distinct)));
  const best = Math.min(...score);
  if (!Number.isFinite(best)) return counts.map(() => 1);
  const w = score.map((s) => best / s);
  const least = Math.min(...w.filter((x) => x > 0));
  return w.map((x) => (x > 0 ? x : least / 2));
}

/**
 * The i-th (0-based) of k sub-boxes of a box by recursive bisection: each time across the axis
 * with the largest weight × width relative to the whole box (lowest index on ties, within 1e-12),
 * the k parts shared ⌊k/2⌋ : ⌈k/2⌉ and the cut placed in that proportion. With every weight 1 this
 * is `subBox` (canonical.ts). The k sub-boxes tile the box. Arrays are new (caller owns them).
 */
export function splitBox(box: Box, i: number, k: number, weights: readonly number[]): { lower: number[]; upper: number[] } {
  if (!(Number.isInteger(k) && k >= 1 && Number.isInteger(i) && i >= 0 && i < k)) throw new RangeError(`part ${i} of ${k}`);
  const lower = Array.from(box.lower);
  const upper = Array.from(box.upper);
  const width = lower.map((l, j) => upper[j] - l);
  let n = k;
  let at = i;
  while (n > 1) {
    let axis = 0;
    let best = -Infinity;
    for (let j = 0; j < lower.length; j++) {
      const rel = width[j] > 0 ? ((upper[j] - lower[j]) / width[j]) * (weights[j] ?? 1) : 0;
      if (rel > best + 1e-12) {
        best = rel;
        axis = j;
      }
    }
    const left = Math.floor(n / 2);
    const cut = lower[axis] + ((upper[axis] - lower[axis]) * left) / n;
    if (at < left) {
      upper[axis] = cut;
      n = left;
    } else {
      lower[axis] = cut;
      at -= left;
      n -= left;
    }
  }
  return { lower, upper };
}
