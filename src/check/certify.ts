/**
 * Certificate of a generated build: the arithmetic of the emitted C (reproduced exactly by
 * evaluateArrays: float or double) against the double law of the table, on a dense seeded sample of
 * the box plus points just inside and just outside every facet of every region. `emit --certify`
 * certifies the build it emits, in its own precision.
 */
import type { TableFile } from '../table/format.js';
import { applyAffine } from '../table/table.js';
import { clampInputs } from '../table/clamp.js';
import { locateRegion } from '../table/locator.js';
import { tol } from '../tol.js';
import { boxAbsMax, evaluateArrays, FLOAT_U, regionTests, roundUp, type EmitArrays } from '../emit/arrays.js';
import { sampleBox } from '../emit/sample.js';

/** Default accepted |u_float − u_double|: this fraction of the widest finite input range (or of 1). */
export const CERTIFY_DEFAULT_RELATIVE = 1e-5;
/** Offsets of the facet points from each facet: fractions of the region's Chebyshev radius, of the box width, and float ulps of |θ|max. */
export const FACET_OFFSETS = { radiusFraction: 1e-3, boxFraction: 1e-6, floatUlps: 8 };

export interface CertifyOptions {
  samples?: number;
  seed?: number;
  /** accepted max |u_float − u_double| (absolute, in input units) */
  tolerance?: number;
  /** extra points to include (e.g. a self-test set) */
  extraPoints?: number[][];
}

export interface Certificate {
  precision: string;
  search: EmitArrays['search'];
  points: { sample: number; facet: number; extra: number; total: number };
  /** largest |u_float − u_double| (∞-norm) over points that both builds locate */
  maxAbsDiff: number;
  /** the same, restricted to points located in the same region */
  maxAbsDiffSameRegion: number;
  /** points that the float build locates in another region than the double law */
  relocated: number;
  /** largest difference of the two regions' laws (evaluated in double) at those points */
  relocatedMaxLawDiff: number;
  /** points inside some region in double but outside every region in float */
  lostInFloat: number;
  /** points outside every region in double but located by the float build (within its wider slack) */
  gainedInFloat: number;
  tolerance: number;
  safe: boolean;
  verdict: string;
  worstTheta: number[] | null;
  /** a-priori bounds of |u_float − u_double| (DEVELOPERS.md, "Point location in float") */
  bounds: FloatBounds;
  /** when NOT SAFE: the law and facet responsible at the worst point, the condition number and what to change */
  diagnosis: string | null;
}

export interface FloatBounds {
  /** rounding θ to float alone: max over regions and inputs of u·Σ_j |F_ij|·|θ_j|max */
  inputRounding: number;
  /** where: region and input of that maximum, and the law's gain Σ_j |F_ij| */
  inputRoundingAt: { region: number; input: number; gain: number };
  /**
   * overlap: a θ of region N placed by best fit in its neighbour R across their shared facet a·θ ≤ b of
   * R lies beyond it by at most the window η = S_R + S_N (the two regions' slacks, which bound the
   * rounding of the residuals, see floatBounds), so it carries |u_R(θ) − u_N(θ)| = |δ|·(a·θ − b) ≤ |δ|·η
   * (continuity: F_R − F_N = δ aᵀ); the largest |δ|·η over every facet with a neighbour
   */
  overlap: number;
  overlapAt: { region: number; facet: number; neighbour: number; jump: number; window: number } | null;
  /**
   * facets shared with a neighbour across which the law is not continuous (the two affine pieces
   * differ on the facet by more than `threshold`, see facetGap): the overlap bound does not
   * hold there, and a θ within rounding of such a facet may get either side's law in float (and,
   * within tol.inside, in double). The optimiser of a strictly convex QP is continuous, so a solved
   * table has such facets only where its laws are inaccurate (thin, nearly degenerate regions); a
   * hand-made table may have many.
   */
  discontinuous: { count: number; maxGap: number; at: { region: number; facet: number; neighbour: number } | null; threshold: number };
}

/**
 * The jump of the law across R's facet a·θ = b toward its neighbour N, at p: R's Chebyshev centre
 * projected onto the facet's plane, max over inputs of |u_R(p) − u_N(p)|; null when p is not within
 * `near` of N (the contact lies elsewhere: not measured). Zero up to rounding when the law is
 * continuous across the facet.
 */
export function facetGap(R: TableFile['regions'][number], i: number, N: TableFile['regions'][number], near: number): number | null {
  const c = R.chebyshev.center;
  const a = R.A[i];
  let ac = 0;
  for (let j = 0; j < a.length; j++) ac += a[j] * c[j];
  const t = R.b[i] - ac;
  const p = c.map((cj, j) => cj + t * a[j]);
  for (let q = 0; q < N.A.length; q++) {
    let s = 0;
    for (let j = 0; j < p.length; j++) s += N.A[q][j] * p[j];
    if (s - N.b[q] > near) return null;
  }
  const ur = applyAffine(R.law, p);
  const un = applyAffine(N.law, p);
  let gap = 0;
  for (let k = 0; k < ur.length; k++) gap = Math.max(gap, Math.abs(ur[k] - un[k]));
  return gap;
}

/** Distance within which a facet point counts as touching the neighbour (facetGap): 10⁻⁶ of the widest box side. */
function nearFacet(table: TableFile): number {
  let w = 0;
  for (let j = 0; j < table.dims.ntheta; j++) w = Math.max(w, table.box.upper[j] - table.box.lower[j]);
  return 1e-6 * w;
}

/**
 * The a-priori bounds of a float build of `table` (best fit, regionSlack of buildArrays).
 * Overlap: let θ lie in region N in double (every row a·θ − b ≤ tol.inside) and be placed by the
 * float build in R ≠ N. ρ_X = max_i (a_i·θ − b_i) is the exact slack-free residual of region X and
 * ρ̂_X its float value, |ρ̂_X − ρ_X| ≤ ε_X (the rounding of the row test, regionTests), and
 * S_X ≥ 1.01·(tol.inside + ε_X) its slack. Best fit chose R, so ρ̂_R ≤ ρ̂_N, hence
 * ρ_R ≤ ρ̂_N + ε_R ≤ ρ_N + ε_N + ε_R ≤ tol.inside + ε_N + ε_R ≤ S_N + S_R =: η. On R's facet shared
 * with N (a unit), θ on N's side gives 0 ≤ a·θ − b ≤ ρ_R ≤ η, and continuity gives
 * u_R(θ) − u_N(θ) = δ·(a·θ − b): |Δu| ≤ |δ|·η, |δ| the 2-norm of the jump of F's rows.
 */
export function floatBounds(table: TableFile, threshold: number = defaultTolerance(table)): FloatBounds {
  const m = boxAbsMax(table.box);
  let inputRounding = 0;
  let inputRoundingAt = { region: -1, input: -1, gain: 0 };
  let overlap = 0;
  let overlapAt: FloatBounds['overlapAt'] = null;
  const discontinuous: FloatBounds['discontinuous'] = { count: 0, maxGap: 0, at: null, threshold };
  const near = nearFacet(table);
  const byId = new Map<number, number>();
  table.regions.forEach((r, k) => byId.set(r.id, k));
  const tests = regionTests(table, 'float');
  const regionSlack = tests.map((t) => roundUp(Math.max(...t.slack)));
  table.regions.forEach((r, k) => {
    r.law.F.forEach((row, i) => {
      let e = 0;
      let gain = 0;
      row.forEach((v, j) => {
        e += Math.abs(v) * m[j];
        gain += Math.abs(v);
      });
      e *= FLOAT_U;
      if (e > inputRounding) {
        inputRounding = e;
        inputRoundingAt = { region: k, input: i, gain };
      }
    });
    r.A.forEach((_, i) => {
      for (const id of r.facets?.[i]?.neighbours ?? []) {
        const nk = byId.get(id);
        if (nk === undefined) continue;
        const N = table.regions[nk];
        const gap = facetGap(r, i, N, near);
        if (gap !== null && gap > threshold) {
          // not continuous across this facet: no Lipschitz bound here (counted apart)
          discontinuous.count++;
          if (gap > discontinuous.maxGap) {
            discontinuous.maxGap = gap;
            discontinuous.at = { region: k, facet: i, neighbour: nk };
          }
          continue;
        }
        let jump = 0;
        r.law.F.forEach((row, q) => {
          let d2 = 0;
          row.forEach((v, j) => (d2 += (v - N.law.F[q][j]) ** 2));
          jump = Math.max(jump, Math.sqrt(d2));
        });
        const window = regionSlack[k] + regionSlack[nk];
        if (window * jump > overlap) {
          overlap = window * jump;
          overlapAt = { region: k, facet: i, neighbour: nk, jump, window };
        }
      }
    });
  });
  return { inputRounding, inputRoundingAt, overlap, overlapAt, discontinuous };
}

/** How the default tolerance is derived, for `--help` and the report. */
export const CERTIFY_TOLERANCE_RULE = `${CERTIFY_DEFAULT_RELATIVE} × the widest finite input range (max over inputs of upper − lower limit), or ${CERTIFY_DEFAULT_RELATIVE} when no input has both limits`;

export function defaultTolerance(table: TableFile): number {
  let w = 0;
  for (let i = 0; i < table.dims.nu; i++) {
    const lo = table.inputLimits?.lower?.[i];
    const hi = table.inputLimits?.upper?.[i];
    if (lo !== null && lo !== undefined && hi !== null && hi !== undefined) w = Math.max(w, hi - lo);
  }
  return CERTIFY_DEFAULT_RELATIVE * (w > 0 ? w : 1);
}

/** Points at the Chebyshev centre of each region pushed toward each facet, ending just inside and just outside it. */
export function facetPoints(table: TableFile): number[][] {
  const n = table.dims.ntheta;
  let thetaMax = 0;
  let width = 0;
  for (let j = 0; j < n; j++) {
    thetaMax = Math.max(thetaMax, Math.abs(table.box.lower[j]), Math.abs(table.box.upper[j]));
    width = Math.max(width, table.box.upper[j] - table.box.lower[j]);
  }
  const out: number[][] = [];
  for (const r of table.regions) {
    const c = r.chebyshev.center;
    const deltas = [FACET_OFFSETS.radiusFraction * r.chebyshev.radius, FACET_OFFSETS.boxFraction * width, FACET_OFFSETS.floatUlps * 2 ** -23 * thetaMax];
    r.A.forEach((a, i) => {
      let ac = 0;
      for (let j = 0; j < n; j++) ac += a[j] * c[j];
      const dist = r.b[i] - ac; // rows are unit-norm: distance from the centre to the facet plane
      for (const d of deltas)
        for (const t of [dist - d, dist + d]) out.push(c.map((cj, j) => cj + t * a[j]));
    });
  }
  return out;
}

/** What a build does at θ: the region it locates (−1 for none) and its u. */
export type BuildEvaluator = (theta: number[]) => { region: number; u: number[] | null };

export interface Comparison {
  maxAbsDiff: number;
  maxAbsDiffSameRegion: number;
  relocated: number;
  relocatedMaxLawDiff: number;
  lost: number;
  gained: number;
  worstTheta: number[] | null;
}

/**
 * A build against the table's double law on the given points (shared by the float and fixed-point
 * certificates). `reference` post-processes the double law (the clamp of a clamping build).
 */
export function compareWithDouble(table: TableFile, evaluate: BuildEvaluator, points: Iterable<number[]>, reference: (u: number[]) => number[] = (u) => u): Comparison {
  let maxAbsDiff = 0;
  let maxSame = 0;
  let relocated = 0;
  let relocatedMaxLawDiff = 0;
  let lost = 0;
  let gained = 0;
  let worstTheta: number[] | null = null;
  for (const theta of points) {
    const rd = locateRegion(table.regions, theta, tol.inside, table.box);
    const ef = evaluate(theta);
    if (rd < 0) {
      if (ef.region >= 0) gained++;
      continue;
    }
    if (ef.region < 0) {
      lost++;
      continue;
    }
    const ud = reference(applyAffine(table.regions[rd].law, theta));
    let diff = 0;
    for (let i = 0; i < ud.length; i++) diff = Math.max(diff, Math.abs(ef.u![i] - ud[i]));
    if (diff > maxAbsDiff) {
      maxAbsDiff = diff;
      worstTheta = [...theta];
    }
    if (ef.region === rd) maxSame = Math.max(maxSame, diff);
    else {
      relocated++;
      const uo = reference(applyAffine(table.regions[ef.region].law, theta));
      for (let i = 0; i < ud.length; i++) relocatedMaxLawDiff = Math.max(relocatedMaxLawDiff, Math.abs(uo[i] - ud[i]));
    }
  }
  return { maxAbsDiff, maxAbsDiffSameRegion: maxSame, relocated, relocatedMaxLawDiff, lost, gained, worstTheta };
}

/**
 * Points in the rounding window of every facet shared with a neighbour: the Chebyshev centre pushed
 * exactly onto the facet's plane and to ± the float test's slack of that row (regionTests), where a
 * float build decides between the two regions by rounding — the points that measure the relocation
 * error which the overlap bound (floatBounds) covers.
 */
export function windowPoints(table: TableFile, threshold: number = defaultTolerance(table)): number[][] {
  const n = table.dims.ntheta;
  const tests = regionTests(table, 'float');
  const byId = new Map<number, number>();
  table.regions.forEach((r, k) => byId.set(r.id, k));
  const near = nearFacet(table);
  const out: number[][] = [];
  table.regions.forEach((r, k) => {
    const c = r.chebyshev.center;
    r.A.forEach((a, i) => {
      const nbs = (r.facets?.[i]?.neighbours ?? []).map((id) => byId.get(id)).filter((x): x is number => x !== undefined);
      if (!nbs.length) return;
      // only where the law is continuous: across a jump of the law itself, a θ within rounding of
      // the facet has no float-safe answer (floatBounds counts those facets apart)
      // (and only where that was checked: the facet point must touch the neighbour)
      if (
        nbs.some((nk) => {
          const gap = facetGap(r, i, table.regions[nk], near);
          return gap === null || gap > threshold;
        })
      )
        return;
      let ac = 0;
      for (let j = 0; j < n; j++) ac += a[j] * c[j];
      const dist = r.b[i] - ac;
      const s = tests[k].slack[i];
      for (const t of [dist - s, dist, dist + s]) out.push(c.map((cj, j) => cj + t * a[j]));
    });
  });
  return out;
}

/** The certificate's point set: seeded uniform sample, facet points (with the rounding window of shared facets), extra points. */
export function certificatePoints(table: TableFile, options: CertifyOptions): { sample: number[][]; facet: number[][]; extra: number[][] } {
  return {
    sample: sampleBox(table.box, options.samples ?? 20000, options.seed ?? 1),
    facet: [...facetPoints(table), ...windowPoints(table, options.tolerance ?? defaultTolerance(table))],
    extra: options.extraPoints ?? [],
  };
}

/**
 * Certificate of a float build (`buildArrays(table, 'float', …)`) against the double law of the
 * table on a seeded uniform sample and on points just inside/outside every facet: max |Δu| in input
 * units, relocated and lost points, and a SAFE / NOT SAFE verdict at `options.tolerance`.
 */
export function certifyFloat(table: TableFile, floatBuild: EmitArrays, options: CertifyOptions = {}): Certificate {
  if (floatBuild.precision !== 'float') throw new Error('certifyFloat needs the float build');
  return certifyBuild(table, floatBuild, (t) => evaluateArrays(floatBuild, t), options);
}

/** What the certificate needs to know of a build besides its evaluator. */
export interface CertifiedBuild {
  precision: string;
  search: EmitArrays['search'];
  /** slack of its region tests */
  slack: number;
  /** input limits the build saturates to (`emit --clamp`), or null/absent */
  clamp?: EmitArrays['clamp'];
}

/**
 * Certify a float or double build in its own precision, through its own evaluator. A build that
 * clamps (`emit --clamp`) is compared with the double law saturated the same way.
 */
export function certifyBuild(table: TableFile, floatBuild: CertifiedBuild, evaluate: BuildEvaluator, options: CertifyOptions = {}): Certificate {
  const prec = floatBuild.precision;
  const { sample, facet, extra } = certificatePoints(table, options);
  const tolerance = options.tolerance ?? defaultTolerance(table);
  const reference = floatBuild.clamp ? (u: number[]) => clampInputs(u, table.inputLimits) : undefined;
  // a float build sees θ as float: the double law is taken at that θ too (rounding a double θ to float
  // is the sensor's/caller's quantisation, reported apart as bounds.inputRounding, not the build's error)
  const pts = [...sample, ...facet, ...extra];
  const cmp = compareWithDouble(table, evaluate, prec === 'float' ? pts.map((p) => p.map(Math.fround)) : pts, reference);
  const { maxAbsDiff, maxAbsDiffSameRegion: maxSame, relocated, relocatedMaxLawDiff, lost, gained, worstTheta } = cmp;
  const safe = lost === 0 && maxAbsDiff <= tolerance;
  let diagnosis: string | null = null;
  if (!safe && worstTheta) {
    const rd = locateRegion(table.regions, worstTheta, tol.inside, table.box);
    const rf = evaluate(worstTheta).region;
    const m = boxAbsMax(table.box);
    const law = table.regions[rd].law;
    // condition number of the law at the worst point: Σ|F_ij θ_j| + |g_i| over |u_i| (cancellation ratio)
    let kappa = 0;
    let gain = 0;
    law.F.forEach((row, i) => {
      const u = applyAffine(law, worstTheta)[i];
      const mag = row.reduce((acc, v, j) => acc + Math.abs(v * worstTheta[j]), Math.abs(law.g[i]));
      kappa = Math.max(kappa, mag / Math.max(Math.abs(u), Number.MIN_VALUE));
      gain = Math.max(gain, row.reduce((acc, v) => acc + Math.abs(v), 0));
    });
    const quant = gain * FLOAT_U * Math.max(...m);
    const parts = [`at θ = [${worstTheta.map((v) => v.toPrecision(6)).join(', ')}] the double law is region ${rd}'s (gain Σ|F| = ${gain.toPrecision(4)}, condition number Σ|F θ| + |g| over |u| = ${kappa.toPrecision(3)}); rounding θ to float alone moves u by up to ${quant.toPrecision(3)}`];
    if (rf >= 0 && rf !== rd) {
      // the facet of the float region that θ lies beyond (its largest violation)
      const R = table.regions[rf];
      let worstRow = 0;
      let worstViol = -Infinity;
      R.A.forEach((a, i) => {
        const v = a.reduce((acc, x, j) => acc + x * worstTheta[j], 0) - R.b[i];
        if (v > worstViol) {
          worstViol = v;
          worstRow = i;
        }
      });
      let jump = 0;
      R.law.F.forEach((row, q) => (jump = Math.max(jump, Math.sqrt(row.reduce((acc, v, j) => acc + (v - law.F[q][j]) ** 2, 0)))));
      parts.push(
        `the float build located it in region ${rf}, ${worstViol.toExponential(2)} beyond its facet ${worstRow} (overlap slack ${regionTests(table, 'float')[rf].slack[worstRow].toExponential(2)}); the laws of ${rf} and ${rd} differ by |δ| = ${jump.toPrecision(4)} across it`,
      );
    }
    parts.push(
      rf === rd
        ? `the float evaluation of this law itself is off by ${maxAbsDiff.toPrecision(3)} (cancellation); what to change: use the double build, scale θ or raise the input weight to reduce the gain, or accept a tolerance above ${maxAbsDiff.toPrecision(2)}`
        : `what to change: use the double build, merge or drop the thin region with the large law jump (a larger input weight reduces the jumps), or accept a tolerance above ${maxAbsDiff.toPrecision(2)}`,
    );
    diagnosis = parts.join('; ');
  }
  const total = sample.length + facet.length + extra.length;
  const bounds = floatBounds(table, tolerance);
  const verdict = safe
    ? `SAFE at tolerance ${tolerance.toPrecision(3)}: on ${total} points the ${prec} build differs from the double law by at most ${maxAbsDiff.toPrecision(3)}, and no point inside a region is lost in ${prec}` +
      (gained > 0 ? ` (${gained} points just outside every region are located in ${prec}, within its slack ${floatBuild.slack.toPrecision(3)})` : '') +
      (prec === 'float' ? `; θ is taken as float, whose own rounding moves the law by up to ${bounds.inputRounding.toPrecision(3)}` : '') +
      (bounds.discontinuous.count > 0
        ? `; note: the law jumps by up to ${bounds.discontinuous.maxGap.toPrecision(3)} across ${bounds.discontinuous.count} facets (region ${bounds.discontinuous.at!.region} facet ${bounds.discontinuous.at!.facet} to region ${bounds.discontinuous.at!.neighbour}), where a θ within rounding of the facet may get either side's law`
        : '')
    : `NOT SAFE at tolerance ${tolerance.toPrecision(3)}: ` +
      [maxAbsDiff > tolerance ? `max |u_build - u_table| = ${maxAbsDiff.toPrecision(3)} exceeds it` : '', lost > 0 ? `${lost} points inside a region fall outside every region in ${prec}` : '']
        .filter(Boolean)
        .join('; ') +
      (prec === 'float' ? '; use the double build (--precision double) or a larger --tolerance (see the diagnosis)' : '; check the table with tessera gaps, or give a larger --tolerance');
  return {
    precision: prec,
    search: floatBuild.search,
    points: { sample: sample.length, facet: facet.length, extra: extra.length, total },
    maxAbsDiff,
    maxAbsDiffSameRegion: maxSame,
    relocated,
    relocatedMaxLawDiff,
    lostInFloat: lost,
    gainedInFloat: gained,
    tolerance,
    safe,
    verdict,
    worstTheta,
    bounds,
    diagnosis,
  };
}
