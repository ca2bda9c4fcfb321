/**
 * Certificate of a generated build: the arithmetic of the emitted C (reproduced exactly by
 * evaluateArrays: float or double) against the double law of the table, on a dense seeded sample of
 * the box plus points just inside and just outside every facet of every region. `emit --certify`
 * certifies the build it emits, in its own precision.
 */
import type { TableFile } from '../table/format.js';
import { applyAffine, locateSequential } from '../table/table.js';
import { clampInputs } from '../table/clamp.js';
import { evaluateArrays, type EmitArrays } from '../emit/arrays.js';
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
    const rd = locateSequential(table.regions, theta);
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

/** The certificate's point set: seeded uniform sample, facet points, extra points. */
export function certificatePoints(table: TableFile, options: CertifyOptions): { sample: number[][]; facet: number[][]; extra: number[][] } {
  return { sample: sampleBox(table.box, options.samples ?? 20000, options.seed ?? 1), facet: facetPoints(table), extra: options.extraPoints ?? [] };
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
  const cmp = compareWithDouble(table, evaluate, [...sample, ...facet, ...extra], reference);
  const { maxAbsDiff, maxAbsDiffSameRegion: maxSame, relocated, relocatedMaxLawDiff, lost, gained, worstTheta } = cmp;
  const safe = lost === 0 && maxAbsDiff <= tolerance;
  const total = sample.length + facet.length + extra.length;
  const verdict = safe
    ? `SAFE at tolerance ${tolerance.toPrecision(3)}: on ${total} points the ${prec} build differs from the double law by at most ${maxAbsDiff.toPrecision(3)}, and no point inside a region is lost in ${prec}` +
      (gained > 0 ? ` (${gained} points just outside every region are located in ${prec}, within its slack ${floatBuild.slack.toPrecision(3)})` : '')
    : `NOT SAFE at tolerance ${tolerance.toPrecision(3)}: ` +
      [maxAbsDiff > tolerance ? `max |u_build - u_table| = ${maxAbsDiff.toPrecision(3)} exceeds it` : '', lost > 0 ? `${lost} points inside a region fall outside every region in ${prec}` : '']
        .filter(Boolean)
        .join('; ') +
      (prec === 'float' ? '; use the double build (--precision double) or a larger --tolerance' : '; check the table with tessera gaps, or give a larger --tolerance');
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
  };
}
