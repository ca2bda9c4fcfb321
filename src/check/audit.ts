/**
 * `tessera audit`: every check a table needs before someone signs it off, in one report.
 *
 *  1 identity      problem hash, formulation, θ layout, tolerances, tool version, completeness
 *  2 agreement     table u(0) vs the online QP (quadprog) on a seeded sample and on points pushed
 *                  just inside/outside every facet (the certificate's facet points)
 *  3 coverage      the gaps analysis (Monte Carlo, facet probes, exact areas in 2-D) and maps
 *  4 invariance    exact recursive feasibility by LP, region by region (src/check/invariance.ts)
 *  5 stability     J*(θ⁺) − J*(θ) ≤ −ℓ(θ, u) on a dense sample and at region vertices
 *  6 embedded      float certificate and worst-case cost of the C build (computed by the caller)
 *  7 closed loop   runs through the simulate engine from the covered box vertices and a sample
 *
 * Pure: the caller supplies the online QP, the embedded-build figures and the maps; no file access.
 */
import { randomLcg } from 'd3';
import type { TableFile } from '../table/format.js';
import type { MpqpProblem } from '../mpqp/types.js';
import type { MpcModel } from '../problem/types.js';
import { applyAffine, regionContains } from '../table/table.js';
import { locatePoint, locateRegion } from '../table/locator.js';
import { tol } from '../tol.js';
import { facetPoints } from './certify.js';
import { analyseCoverage, feasibleAt, type CoverageReport } from './gaps.js';
import { checkInvariance, type InvarianceReport } from './invariance.js';
import { limitsOf, plantOf, simulateFromTheta, splitTheta, stepPlant, summarise, type RunResult, type SimulationSetup, type SimulationSummary } from './simulate.js';
import { polytopeVertices } from '../partition/tree-poly.js';
import { thetaBlock } from '../formulation/layout.js';
import type { SearchKind } from '../emit/arrays.js';
import type { SearchChoice } from '../emit/index.js';
import { steadyStateTarget } from '../formulation/target.js';
import { solveOnlineQp } from './onlineqp.js';

/** INFO: evidence reported where no pass/fail criterion applies (it never fails the audit). */
export type Verdict = 'PASS' | 'FAIL' | 'INFO';

export interface CheckResult<T> {
  name: string;
  verdict: Verdict;
  /** one line: what passed or what failed, with a witness when there is one */
  line: string;
  /** how it was checked and against what */
  method: string;
  witness?: number[] | null;
  data: T;
}

export interface IdentityData {
  name: string;
  problemHash: string;
  recomputedHash: string;
  /** hash of the --problem file when one was given */
  problemFileHash: string | null;
  formulation: string;
  features: string[];
  theta: { kind: string; names: string[]; lower: number[]; upper: number[] }[];
  law: string[];
  tolerances: Record<string, number>;
  toolVersion: string;
  tableVersion: number;
  complete: boolean;
  stopReason: string;
  regions: number;
  unresolvedPieces: number;
}

export interface AgreementData {
  samples: number;
  seed: number;
  facetPoints: number;
  compared: number;
  tolerance: number;
  maxAbsDiff: number;
  maxTheta: number[] | null;
  overTolerance: number;
  /** located by the table (inside a region exactly) where the online QP is infeasible */
  tableOnly: number;
  /**
   * held by a region only within the location slack (tol.inside; no region holds them exactly)
   * where the online QP is infeasible: points just outside the feasible set, not a disagreement
   */
  tableOnlyBoundary: number;
  /** feasible for the online QP and for the feasibility LP, but in no region (holes) */
  onlineOnly: number;
  /** feasible for the online QP within its tolerance but infeasible for the feasibility LP: points just outside the feasible set */
  onlineOnlyBoundary: number;
  /** facet points pushed outside the parameter box: outside the table's domain, skipped */
  outsideBox: number;
  firstOnlineOnly: number[] | null;
  firstTableOnly: number[] | null;
}

export interface StabilityData {
  points: number;
  sample: number;
  vertices: number;
  /** points whose successor lies in no region (left out: invariance covers them) */
  successorOutside: number;
  /** max of J*(θ⁺) − J*(θ) + ℓ(θ, u), relative to 1 + J*(θ) */
  worst: number;
  worstTheta: number[] | null;
  violations: number;
  tolerance: number;
  /**
   * points whose J* pair was taken from the online QP's optimiser instead of the stored value
   * functions: where the stored quadratic's own rounding (γ_n × its absolute terms, both sides)
   * exceeds a tenth of the tolerance, it cannot resolve the decrease
   */
  recomputed: number;
  /** the ingredients the textbook argument needs (Riccati terminal weight and a terminal set) */
  terminalWeight: string;
  terminalSet: boolean;
}

export interface EmbeddedData {
  /** float, double, or a fixed-point format (q15, q31) of the C target */
  precision: string;
  /** the point-location structure of the build (the one the cost model picked when `searchRequested` is auto) */
  search: SearchKind;
  /** what the caller asked for: a structure, or auto (the cost model of \`emit\`) */
  searchRequested?: SearchChoice;
  /** the float or fixed-point certificate; null for the double build */
  certificate: null | { safe: boolean; verdict: string; maxAbsDiff: number; tolerance: number; points: number; lost: number; worstTheta: number[] | null };
  cost: { worstMultiplyAdds: number; worstComparisons: number; worstDepth: number; bytes: number };
}

export interface ClosedLoopData {
  vertices: { total: number; covered: number; runs: number };
  sampleRuns: number;
  steps: number;
  summary: SimulationSummary;
  worstRun: number | null;
  /** the starting θ of every run (for the report's plot) */
  starts: number[][];
}

export interface AuditReport {
  table: string;
  passed: boolean;
  identity: CheckResult<IdentityData>;
  agreement: CheckResult<AgreementData>;
  coverage: CheckResult<CoverageReport>;
  invariance: CheckResult<InvarianceReport>;
  stability: CheckResult<StabilityData>;
  embedded: CheckResult<EmbeddedData>;
  closedLoop: CheckResult<ClosedLoopData>;
}

export interface AuditInputs {
  table: TableFile;
  /** the problem's model and mpQP (the table's echo, or --problem) */
  model: MpcModel;
  mpqp: MpqpProblem;
  recomputedHash: string;
  problemFileHash: string | null;
  toolVersion: string;
  online: (theta: ArrayLike<number>) => number[] | null;
  embedded: EmbeddedData;
  samples?: number;
  seed?: number;
  steps?: number;
  onStage?: (stage: string) => void;
  /** receives the closed-loop runs (for plots; they are not kept in the report) */
  onRuns?: (runs: RunResult[], setup: SimulationSetup) => void;
}

const fmt = (v: number) => (Number.isFinite(v) ? Number(v.toPrecision(4)).toString() : String(v));
export const fmtTheta = (names: string[], th: number[] | null | undefined): string => (th ? names.map((n, i) => `${n}=${fmt(th[i])}`).join(', ') : '—');

/** |Δu| accepted between table and online QP: 1e-6 of the widest finite input range (or of 1). */
export function agreementTolerance(table: TableFile): number {
  let w = 0;
  for (let i = 0; i < table.dims.nu; i++) {
    const lo = table.inputLimits?.lower?.[i];
    const hi = table.inputLimits?.upper?.[i];
    if (lo !== null && lo !== undefined && hi !== null && hi !== undefined) w = Math.max(w, hi - lo);
  }
  return 1e-6 * Math.max(1, w);
}

function seededBox(table: TableFile, count: number, seed: number): number[][] {
  const rnd = randomLcg(seed);
  return Array.from({ length: count }, () => table.box.lower.map((l, j) => l + rnd() * (table.box.upper[j] - l)));
}

export function checkIdentity(inp: AuditInputs): CheckResult<IdentityData> {
  const t = inp.table;
  const data: IdentityData = {
    name: t.name,
    problemHash: t.problemHash,
    recomputedHash: inp.recomputedHash,
    problemFileHash: inp.problemFileHash,
    formulation: t.layout.formulation,
    features: t.layout.features,
    theta: t.layout.theta.map((b) => ({
      kind: b.kind,
      names: b.names,
      lower: t.box.lower.slice(b.offset, b.offset + b.size),
      upper: t.box.upper.slice(b.offset, b.offset + b.size),
    })),
    law: t.layout.lawNames,
    tolerances: t.tolerances,
    toolVersion: inp.toolVersion,
    tableVersion: t.version,
    complete: t.stats.complete !== false,
    stopReason: t.stats.stopReason,
    regions: t.regions.length,
    unresolvedPieces: t.stats.unresolvedPieces ?? 0,
  };
  const problems: string[] = [];
  if (data.recomputedHash !== data.problemHash) problems.push('the echoed problem does not match the recorded hash');
  if (data.problemFileHash && data.problemFileHash !== data.problemHash) problems.push('the --problem file is not the problem the table was built from');
  if (!data.complete) problems.push(`the table is INCOMPLETE (stopped: ${data.stopReason})`);
  if (data.unresolvedPieces > 0) problems.push(`${data.unresolvedPieces} unresolved facet(s): a piece the exploration gave up on that no region of the table covers`);
  return {
    name: 'Identity',
    verdict: problems.length ? 'FAIL' : 'PASS',
    line: problems.length ? problems.join('; ') : `problem hash verified, table complete, ${data.regions} regions`,
    method: 'SHA-256 of the canonical JSON of the problem echoed in the table, recomputed and compared with the recorded hash; completeness and unresolved facets (pieces given up on in the exploration and not covered by the final regions, re-checked when the table was made) from the table statistics.',
    data,
  };
}

export function checkAgreement(inp: AuditInputs): CheckResult<AgreementData> {
  const { table } = inp;
  const samples = inp.samples ?? 2000;
  const seed = inp.seed ?? 1;
  const sample = seededBox(table, samples, seed);
  const facet = facetPoints(table);
  const tolerance = agreementTolerance(table);
  const d: AgreementData = { samples, seed, facetPoints: facet.length, compared: 0, tolerance, maxAbsDiff: 0, maxTheta: null, overTolerance: 0, tableOnly: 0, tableOnlyBoundary: 0, onlineOnly: 0, onlineOnlyBoundary: 0, outsideBox: 0, firstOnlineOnly: null, firstTableOnly: null };
  const inBox = (th: number[]) => th.every((v, j) => v >= table.box.lower[j] && v <= table.box.upper[j]);
  for (const th of [...sample, ...facet]) {
    if (!inBox(th)) {
      d.outsideBox++;
      continue;
    }
    // a region holding θ exactly wins over a neighbour that holds it only within the slack
    const { region: ri, violation } = locatePoint(table.regions, th, tol.inside, table.box);
    const uo = inp.online(th);
    if (ri < 0 && !uo) continue;
    if (ri < 0) {
      if (!feasibleAt(inp.mpqp, th)) {
        d.onlineOnlyBoundary++;
        continue;
      }
      d.onlineOnly++;
      d.firstOnlineOnly ??= th;
      continue;
    }
    if (!uo) {
      if (violation > 0) {
        d.tableOnlyBoundary++;
        continue;
      }
      d.tableOnly++;
      d.firstTableOnly ??= th;
      continue;
    }
    d.compared++;
    const ut = applyAffine(table.regions[ri].law, th);
    let diff = 0;
    for (let i = 0; i < ut.length; i++) diff = Math.max(diff, Math.abs(ut[i] - uo[i]));
    if (diff > tolerance) d.overTolerance++;
    if (diff > d.maxAbsDiff || !d.maxTheta) {
      d.maxAbsDiff = diff;
      d.maxTheta = th;
    }
  }
  const names = table.thetaNames;
  const fail = d.overTolerance > 0 || d.tableOnly > 0;
  let line = `max |Δu| = ${fmt(d.maxAbsDiff)} at ${fmtTheta(names, d.maxTheta)} over ${d.compared} points; ${d.overTolerance} above the tolerance ${fmt(tolerance)}`;
  if (d.tableOnly) line += `; the table gives a law at ${d.tableOnly} point(s) where the online QP is infeasible (first: ${fmtTheta(names, d.firstTableOnly)})`;
  if (d.onlineOnly) line += `; ${d.onlineOnly} feasible point(s) in no region (see coverage)`;
  if (d.tableOnlyBoundary) line += `; ${d.tableOnlyBoundary} point(s) just outside the feasible set held by a region within the location slack ${fmt(tol.inside)} (the online QP rejects them)`;
  if (d.onlineOnlyBoundary) line += `; ${d.onlineOnlyBoundary} point(s) just outside the feasible set accepted by quadprog within its tolerance (the feasibility LP rejects them)`;
  return {
    name: 'Agreement with the online MPC',
    verdict: fail ? 'FAIL' : 'PASS',
    line,
    method: `The online QP solved at every point by quadprog (Goldfarb & Idnani's dual method, 1983; npm package quadprog 1.6), independent of the table's own engine. Points: ${samples} uniform in the box (d3 randomLcg, seed ${seed}) plus ${facet.length} points pushed from each region's Chebyshev centre to just inside and just outside every facet (offsets 1e-3 of the radius, 1e-6 of the box width, 8 float ulps).`,
    witness: fail ? (d.overTolerance ? d.maxTheta : d.firstTableOnly) : null,
    data: d,
  };
}

export function checkCoverage(inp: AuditInputs): CheckResult<CoverageReport> {
  const r = analyseCoverage(inp.table, inp.mpqp, { samples: Math.max(inp.samples ?? 2000, 1000) * 2, seed: inp.seed ?? 1, maxWitnesses: 5 });
  const names = inp.table.thetaNames;
  const mc = r.monteCarlo;
  const pct = (f: { fraction: number; stderr: number }) => `${(100 * f.fraction).toFixed(2)} % ± ${(100 * f.stderr).toFixed(2)} %`;
  const w = r.witnesses[0];
  const line = r.hasHoles
    ? `HOLE: feasible θ in no region, e.g. ${fmtTheta(names, w?.theta)} (${w?.source}${w?.fromRegion !== undefined ? `, across a facet of region ${w.fromRegion}` : ''}); ${r.holeWitnessCount} witness(es)`
    : `no hole: covered ${pct(mc.covered)}, infeasible ${pct(mc.infeasible)} of the box${r.exact2d ? `; exact: holes ${r.exact2d.areas.holes.toExponential(2)} area` : ''}`;
  return {
    name: 'Coverage',
    verdict: r.hasHoles ? 'FAIL' : 'PASS',
    line,
    method: `The gaps analysis: ${mc.samples} uniform points (seed ${mc.seed}, ± one binomial standard error), each uncovered point classified infeasible or hole by the feasibility LP; a probe just across each of ${r.facetProbes.facets} non-box facets; exact polygon areas when θ is 2-D.`,
    witness: w ? w.theta : null,
    data: r,
  };
}

export function checkInvarianceStep(inp: AuditInputs): CheckResult<InvarianceReport> {
  const rep = checkInvariance(inp.table, plantOf(inp.model));
  const names = inp.table.thetaNames;
  const w = rep.leaving[0];
  const crossesBox = rep.leaving.filter((l) => l.facet.endsWith('(box)')).length;
  const line = w
    ? `${rep.leaving.length} region(s) can leave the covered set (${rep.leaving.length - crossesBox} through a boundary of the feasible set, ${crossesBox} through a face of the parameter box); e.g. region ${w.region}: θ = ${fmtTheta(names, w.witness)} → θ⁺ = ${fmtTheta(names, w.successor)} crosses "${w.facet}" by ${fmt(w.excess)}`
    : rep.proven
      ? `PROVEN recursively feasible on the nominal model: no region's successor leaves the covered set (${rep.lps} LPs over ${rep.regions} regions × ${rep.facets.total} facets)${rep.facets.unconfirmed ? `; ${rep.facets.unconfirmed} facet(s) listed without neighbours had regions beyond them and were not used` : ''}`
      : `no region leaves the covered set, but the table is incomplete: not a proof`;
  return {
    name: 'Recursive feasibility (invariance)',
    verdict: rep.proven ? 'PASS' : 'FAIL',
    line,
    method: `For each region R with law u = Fθ + g the nominal successor θ⁺ (x⁺ = Ax + Bu + Bd·d, u_prev⁺ = u, r and d held) is affine on R. The covered set C is the intersection of the half-spaces of the region facets with no neighbour (${rep.facets.boundary} boundary facets of the feasible set, ${rep.facets.box} faces of the parameter box that it touches; faces it does not touch are implied), each confirmed by LP to bound every region (${rep.confirmLps} LPs; ${rep.facets.unconfirmed} listed facet(s) had regions beyond them and were dropped). For every region and facet (a, β) one LP maximises a·θ⁺ over R (the project's LP kernel); an excess above ${rep.margin} (the point-location slack) is a witness. ${rep.lps} LPs.`,
    witness: w ? w.witness : null,
    data: rep,
  };
}

/**
 * Stage cost ℓ(θ, u) = (x − x_s)ᵀQ(x − x_s) + (u − u_s)ᵀR(u − u_s) + ΔuᵀSΔu, with (x_s, u_s) the
 * steady-state target of (r, d) (the origin for regulation) and Δu = u − u_prev when θ holds u_prev.
 * Slack penalties of soft limits are left out (ℓ is then a lower bound of the stage's cost).
 */
function stageCost(model: MpcModel, table: TableFile, th: number[], u: number[]): number {
  const sb = thetaBlock(table.layout, 'state')!;
  const pb = thetaBlock(table.layout, 'inputPrev');
  const parts = splitTheta(table.layout, th);
  const { xs, us } = steadyStateTarget(model, parts.r, parts.d);
  const x = new Array<number>(model.n).fill(0);
  sb.refersTo.forEach((s, i) => (x[s] = th[sb.offset + i] - xs[s]));
  const du0 = u.map((v, i) => v - us[i]);
  const quad = (M: number[][], v: number[]) => v.reduce((s, a, i) => s + a * M[i].reduce((t, b, j) => t + b * v[j], 0), 0);
  let l = quad(model.Q, x) + quad(model.R, du0);
  if (pb && model.S) {
    const du = u.map((v, i) => v - th[pb.offset + pb.refersTo.indexOf(i)]);
    l += quad(model.S, du);
  }
  return l;
}

/** A stored value function at θ and the sum of its absolute terms (the scale of its rounding). */
function valueAt(v: { Q: number[][]; q: number[]; r: number }, th: number[]): { J: number; terms: number } {
  let s = v.r;
  let t = Math.abs(v.r);
  th.forEach((a, i) => {
    s += v.q[i] * a;
    t += Math.abs(v.q[i] * a);
    th.forEach((b, j) => {
      const x = a * v.Q[i][j] * b;
      s += x;
      t += Math.abs(x);
    });
  });
  return { J: s, terms: t };
}

/**
 * J*(θ) = ½zᵀHz + (Fθ + c)ᵀz + ½θᵀYθ from the online QP's optimiser z (quadprog), summed directly:
 * its terms are of the size of the cost, not of the expanded quadratic's coefficients. Null where
 * the online QP finds no solution.
 */
function valueFromOnlineQp(p: MpqpProblem, th: number[]): number | null {
  const res = solveOnlineQp(p, th);
  if (!res.feasible) return null;
  const { nz, ntheta: nt, H, F, c, Y } = p;
  const z = res.z;
  let J = 0;
  for (let i = 0; i < nz; i++) {
    let hz = 0;
    for (let j = 0; j < nz; j++) hz += H[i * nz + j] * z[j];
    let f = c[i];
    for (let j = 0; j < nt; j++) f += F[i * nt + j] * th[j];
    J += z[i] * (0.5 * hz + f);
  }
  for (let a = 0; a < nt; a++) for (let b = 0; b < nt; b++) J += 0.5 * th[a] * Y[a * nt + b] * th[b];
  return J;
}

export function checkStability(inp: AuditInputs): CheckResult<StabilityData> {
  const { table, model } = inp;
  const tolerance = 1e-7;
  const terminalSet = table.layout.features.includes('terminalSet');
  const data: StabilityData = { points: 0, sample: 0, vertices: 0, successorOutside: 0, worst: -Infinity, worstTheta: null, violations: 0, tolerance, recomputed: 0, terminalWeight: model.terminal, terminalSet };
  if (table.lean)
    // a lean table keeps no value function: the check is not done, and the report says so
    return {
      name: 'Stability evidence',
      verdict: 'INFO',
      line: 'NOT CHECKED: the table is lean (solved with --lean) and keeps no value function J*; audit a table solved without --lean for this check',
      method: 'J*(θ⁺) − J*(θ) ≤ −ℓ(θ, u) needs the value function stored per region, which a lean table leaves out.',
      witness: null,
      data: { ...data, worst: 0 },
    };
  // the stored J* is θᵀQθ + qᵀθ + r: its rounding (forming the coefficients from sums of up to
  // nz terms, then evaluating) is at most γ_n × its absolute terms (Higham's dot-product bound)
  const nTerms = inp.mpqp.nz + table.dims.ntheta ** 2 + table.dims.ntheta + 1;
  const gamma = (nTerms * 2 ** -53) / (1 - nTerms * 2 ** -53);
  const plant = plantOf(model);
  const pts: { th: number[]; region: number }[] = [];
  for (const th of seededBox(table, 4 * (inp.samples ?? 2000), (inp.seed ?? 1) + 101)) {
    const ri = locateRegion(table.regions, th, tol.inside, table.box);
    if (ri >= 0) pts.push({ th, region: ri });
  }
  data.sample = pts.length;
  const n = table.dims.ntheta;
  table.regions.forEach((r, ri) => {
    const V = polytopeVertices({ A: r.A, b: r.b }, n);
    if (!V) return;
    for (let k = 0; k < V.length / n; k++) {
      pts.push({ th: Array.from(V.subarray(k * n, (k + 1) * n)), region: ri });
      data.vertices++;
    }
  });
  for (const { th, region } of pts) {
    if (!regionContains(table.regions[region], th)) continue;
    const u = applyAffine(table.regions[region].law, th);
    const Jv = valueAt(table.regions[region].value!, th);
    const parts = splitTheta(table.layout, th);
    const next = nextThetaOf(table, stepPlant(plant, parts.x!, u, parts.d), u, th);
    const rn = locateRegion(table.regions, next, tol.inside, table.box);
    data.points++;
    if (rn < 0) {
      data.successorOutside++;
      continue;
    }
    const Jnv = valueAt(table.regions[rn].value!, next);
    let J = Jv.J;
    let Jn = Jnv.J;
    if (gamma * (Jv.terms + Jnv.terms) > 0.1 * tolerance * (1 + Math.abs(J))) {
      // a thin region with a steep value function: the expanded quadratic cancels (its coefficients
      // reach 6e9 for J* ≈ 36 on a low-gain output-limited plant), so J* comes from the online QP
      const a = valueFromOnlineQp(inp.mpqp, th);
      const b = valueFromOnlineQp(inp.mpqp, next);
      if (a !== null && b !== null) {
        J = a;
        Jn = b;
        data.recomputed++;
      }
    }
    const dec = (Jn - J + stageCost(model, table, th, u)) / (1 + Math.abs(J));
    if (dec > data.worst) {
      data.worst = dec;
      data.worstTheta = th;
    }
    if (dec > tolerance) data.violations++;
  }
  const names = table.thetaNames;
  const ok = data.violations === 0;
  // the decrease is a theorem only with a Riccati terminal weight and an invariant terminal set;
  // without them the figures are evidence, not a criterion
  const expected = terminalSet && model.terminal === 'riccati';
  const fromQp = data.recomputed > 0 ? `; J* from the online QP at ${data.recomputed} points where the stored quadratic's own rounding cannot resolve the decrease` : '';
  const found = ok
    ? `J*(θ⁺) − J*(θ) ≤ −ℓ(θ, u) at all ${data.points - data.successorOutside} points (worst ${fmt(data.worst)} relative to 1 + J*${fromQp})`
    : `the decrease J*(θ⁺) − J*(θ) ≤ −ℓ(θ, u) fails at ${data.violations} of ${data.points - data.successorOutside} points; worst ${fmt(data.worst)} (relative to 1 + J*) at ${fmtTheta(names, data.worstTheta)}${fromQp}`;
  return {
    name: 'Stability evidence',
    verdict: expected ? (ok ? 'PASS' : 'FAIL') : 'INFO',
    line: expected ? found : `${found} — evidence only: without a Riccati terminal weight and an invariant terminal set the decrease is not guaranteed`,
    method: `J* from each region's stored value function (at ${data.recomputed} points, where that quadratic's own rounding — γ_n times its absolute terms, both sides — exceeded a tenth of the tolerance, from the online QP's optimiser instead: ½zᵀHz + (Fθ + c)ᵀz + ½θᵀYθ), ℓ = (x − x_s)ᵀQ(x − x_s) + (u − u_s)ᵀR(u − u_s) (+ ΔuᵀSΔu) the stage cost of the problem around its steady-state target (the origin for regulation; slack penalties left out); ${data.sample} covered points of a uniform sample (seed ${(inp.seed ?? 1) + 101}) and ${data.vertices} region vertices; θ⁺ from the nominal model; points whose θ⁺ is in no region (${data.successorOutside}) are left to the invariance check. Tolerance ${tolerance} relative to 1 + J*(θ). The decrease is the textbook Lyapunov argument for MPC with a terminal weight from the Riccati equation and an invariant terminal set (e.g. Mayne, Rawlings, Rao & Scokaert 2000); terminal weight here: ${model.terminal}, terminal set: ${terminalSet ? 'yes' : 'no'}.`,
    witness: expected && !ok ? data.worstTheta : null,
    data: { ...data, worst: Number.isFinite(data.worst) ? data.worst : 0 },
  };
}

/** θ after one step: x⁺ in the state block, u in the previous-input block, the rest held. */
function nextThetaOf(table: TableFile, xNext: number[], u: number[], th: number[]): number[] {
  const out = th.slice();
  for (const b of table.layout.theta)
    for (let i = 0; i < b.size; i++) {
      if (b.kind === 'state') out[b.offset + i] = xNext[b.refersTo[i]];
      else if (b.kind === 'inputPrev') out[b.offset + i] = u[b.refersTo[i]];
    }
  return out;
}

export function checkEmbedded(inp: AuditInputs): CheckResult<EmbeddedData> {
  const e = inp.embedded;
  const ok = !e.certificate || e.certificate.safe;
  const cost = `worst case ${e.cost.worstMultiplyAdds} multiply-adds, ${e.cost.worstComparisons} comparisons (tree depth ${e.cost.worstDepth}), ${e.cost.bytes} bytes of ${e.precision} arrays`;
  return {
    name: 'Embedded build',
    verdict: ok ? 'PASS' : 'FAIL',
    line: e.certificate ? `${e.certificate.verdict}; ${cost}` : `double build: the C evaluates the table in the same double arithmetic; ${cost}`,
    method: `tessera's C generator for ${e.precision}, ${e.search} search${e.searchRequested === 'auto' ? ' (picked by the cost model of emit --search auto)' : ''}. The ${e.precision === 'float' ? 'float certificate replays the float arithmetic of the generated C (Math.fround after every operation)' : e.precision === 'double' ? 'double build needs no certificate; a certificate would replay its arithmetic' : 'fixed-point certificate replays the exact integer arithmetic of the generated C, with its overflow proof,'} against the double law on a seeded uniform sample plus facet points; cost figures count the worst path through the search and the bytes of every const array.`,
    witness: ok ? null : (e.certificate?.worstTheta ?? null),
    data: e,
  };
}

/** Vertices of the box restricted to the state and previous-input entries (others at the box centre, or as held). */
function boxVertices(table: TableFile, cap: number): { all: number; list: number[][] } {
  const free: number[] = [];
  for (const b of table.layout.theta) if (b.kind === 'state' || b.kind === 'inputPrev') for (let i = 0; i < b.size; i++) free.push(b.offset + i);
  const centre = table.box.lower.map((l, j) => (l + table.box.upper[j]) / 2);
  const all = 2 ** free.length;
  const list: number[][] = [];
  const count = Math.min(all, cap);
  for (let k = 0; k < count; k++) {
    const th = centre.slice();
    free.forEach((j, bit) => (th[j] = (k >> bit) & 1 ? table.box.upper[j] : table.box.lower[j]));
    list.push(th);
  }
  return { all, list };
}

export function checkClosedLoop(inp: AuditInputs): CheckResult<ClosedLoopData> {
  const { table, model } = inp;
  const steps = inp.steps ?? 60;
  const setup: SimulationSetup = {
    table,
    nominal: plantOf(model),
    limits: limitsOf(model).hard,
    softLimits: limitsOf(model).soft,
    names: { states: model.stateNames, inputs: model.inputNames, outputs: model.outputNames },
    online: inp.online,
    steps,
  };
  const bv = boxVertices(table, 256);
  const covered = bv.list.filter((th) => locateRegion(table.regions, th, tol.inside, table.box) >= 0);
  const rnd = randomLcg((inp.seed ?? 1) + 202);
  const sample: number[][] = [];
  for (let t = 0; t < 20000 && sample.length < 20; t++) {
    const th = table.box.lower.map((l, j) => l + rnd() * (table.box.upper[j] - l));
    if (locateRegion(table.regions, th, tol.inside, table.box) >= 0) sample.push(th);
  }
  const starts = [...covered, ...sample];
  const runs = starts.map((th, i) => simulateFromTheta(setup, i, th));
  const summary = summarise(setup, runs);
  inp.onRuns?.(runs, setup);
  const bad = runs.find((r) => r.noRegionSteps > 0 || r.violations.length > 0);
  const names = table.thetaNames;
  const fail = summary.noRegionSteps > 0 || summary.violations > 0;
  const off = summary.offset.length ? `; steady-state offset ${summary.offset.map((o) => `${o.output} ${fmt(o.maxAbs)}`).join(', ')}` : '';
  return {
    name: 'Closed-loop runs',
    verdict: fail ? 'FAIL' : 'PASS',
    line: `${runs.length} runs × ${steps} steps: ${summary.violations} hard-limit violation(s), ${summary.noRegionSteps} step(s) with no region, max |Δu| table vs online QP ${fmt(summary.maxDu)}${off}${bad ? `; first failing run starts at ${fmtTheta(names, starts[bad.run])}` : ''}`,
    method: `The simulate engine on the nominal model: from the ${covered.length} of ${bv.list.length} box vertices (state and previous-input entries at their bounds, the rest at the box centre${bv.all > bv.list.length ? `; first ${bv.list.length} of ${bv.all}` : ''}) that some region covers, and from ${sample.length} covered points of a uniform sample (seed ${(inp.seed ?? 1) + 202}); r and d held at their start values; the online QP (quadprog) solved at every step.`,
    witness: bad ? starts[bad.run] : null,
    data: { vertices: { total: bv.all, covered: covered.length, runs: covered.length }, sampleRuns: sample.length, steps, summary, worstRun: bad ? bad.run : null, starts },
  };
}

/**
 * Run the seven audit checks on a table (identity, agreement with the online QP, coverage, recursive
 * feasibility, stability evidence, embedded build, closed loop) and collect their verdicts. Pure:
 * the caller supplies the online QP, the embedded-build figures and the model; returns a new report.
 */
export function runAudit(inp: AuditInputs, tableName: string): AuditReport {
  const stage = (s: string) => inp.onStage?.(s);
  stage('identity');
  const identity = checkIdentity(inp);
  stage('agreement');
  const agreement = checkAgreement(inp);
  stage('coverage');
  const coverage = checkCoverage(inp);
  stage('invariance');
  const invariance = checkInvarianceStep(inp);
  stage('stability');
  const stability = checkStability(inp);
  const embedded = checkEmbedded(inp);
  stage('closed loop');
  const closedLoop = checkClosedLoop(inp);
  const all = [identity, agreement, coverage, invariance, stability, embedded, closedLoop];
  return { table: tableName, passed: all.every((c) => c.verdict !== 'FAIL'), identity, agreement, coverage, invariance, stability, embedded, closedLoop };
}

/** The seven check results of a report, in report order. */
export function auditChecks(r: AuditReport): CheckResult<unknown>[] {
  return [r.identity, r.agreement, r.coverage, r.invariance, r.stability, r.embedded, r.closedLoop];
}
