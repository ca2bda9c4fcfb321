/**
 * Certificate of a fixed-point build: its exact integer arithmetic (evaluateFixed, θ scaled as the
 * header tells the caller) against the double law of the table on the float certificate's points
 * (seeded sample, points just inside/outside every facet), plus the overflow proof of the build.
 */
import type { TableFile } from '../table/format.js';
import { evaluateFixed, type FixedBuild, type OverflowProof } from '../emit/fixed.js';
import { certificatePoints, compareWithDouble, type CertifyOptions } from './certify.js';

/**
 * Default accepted |u_fixed − u_double|, in output LSBs (2^−uFrac, which the Q format and the law
 * magnitudes fix): the proven same-region error is below 1 + nθ·(θ LSB·|F|)/…; a few LSBs more cover
 * a point relocated across a facet by the region-test margin (the law is continuous there).
 */
export const FIXED_TOLERANCE_LSB = 8;

export interface FixedCertificate {
  precision: FixedBuild['precision'];
  search: FixedBuild['search'];
  points: { sample: number; facet: number; extra: number; total: number };
  maxAbsDiff: number;
  maxAbsDiffSameRegion: number;
  relocated: number;
  relocatedMaxLawDiff: number;
  /** points inside some region in double but in none in fixed point */
  lostInFixed: number;
  gainedInFixed: number;
  /** output resolution 2^−uFrac */
  uLsb: number;
  /** proven bound on |Δu| for a point located in the same region */
  lawErrorBound: number;
  tolerance: number;
  toleranceBasis: string;
  overflow: OverflowProof;
  safe: boolean;
  verdict: string;
  worstTheta: number[] | null;
}

export function fixedTolerance(b: FixedBuild): { tolerance: number; basis: string } {
  const lsb = 2 ** -b.uFrac;
  return { tolerance: FIXED_TOLERANCE_LSB * lsb, basis: `${FIXED_TOLERANCE_LSB} output LSBs of ${b.precision} (u LSB 2^-${b.uFrac} = ${lsb.toPrecision(3)}, from the law magnitudes)` };
}

/**
 * Certificate of a fixed-point build against the double law (seeded sample and facet points, as the
 * float certificate) plus its overflow proof: max |Δu| in input units, relocated/lost points, SAFE / NOT SAFE.
 */
export function certifyFixed(table: TableFile, b: FixedBuild, options: CertifyOptions = {}): FixedCertificate {
  const { sample, facet, extra } = certificatePoints(table, options);
  const auto = fixedTolerance(b);
  const tolerance = options.tolerance ?? auto.tolerance;
  const basis = options.tolerance !== undefined ? 'given' : auto.basis;
  const c = compareWithDouble(table, (t) => evaluateFixed(b, t), [...sample, ...facet, ...extra]);
  const safe = b.proof.ok && c.lost === 0 && c.maxAbsDiff <= tolerance;
  const total = sample.length + facet.length + extra.length;
  const verdict = safe
    ? `SAFE at tolerance ${tolerance.toPrecision(3)} (${basis}): on ${total} points the ${b.precision} build differs from the double law by at most ${c.maxAbsDiff.toPrecision(3)}, no point inside a region is lost, and no intermediate can overflow`
    : `NOT SAFE at tolerance ${tolerance.toPrecision(3)} (${basis}): ` +
      [
        !b.proof.ok ? b.proof.text : '',
        c.maxAbsDiff > tolerance ? `max |u_fixed - u_double| = ${c.maxAbsDiff.toPrecision(3)} exceeds it` : '',
        c.lost > 0 ? `${c.lost} points inside a region fall outside every region in fixed point` : '',
      ]
        .filter(Boolean)
        .join('; ') +
      (b.precision === 'q15' ? '; try q31 or the float build' : '; use a float build');
  return {
    precision: b.precision,
    search: b.search,
    points: { sample: sample.length, facet: facet.length, extra: extra.length, total },
    maxAbsDiff: c.maxAbsDiff,
    maxAbsDiffSameRegion: c.maxAbsDiffSameRegion,
    relocated: c.relocated,
    relocatedMaxLawDiff: c.relocatedMaxLawDiff,
    lostInFixed: c.lost,
    gainedInFixed: c.gained,
    uLsb: 2 ** -b.uFrac,
    lawErrorBound: b.lawErrorBound,
    tolerance,
    toleranceBasis: basis,
    overflow: b.proof,
    safe,
    verdict,
    worstTheta: c.worstTheta,
  };
}
