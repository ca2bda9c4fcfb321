/**
 * Fixed-point build of a table for cores without a floating-point unit: integer-only arithmetic,
 * one power-of-two scaling per array chosen from the data, and an exact emulation of the generated
 * C (BigInt, so products and sums are exact at any width) used by the self-test and the certificate.
 *
 * Formats. `q15`: θ, coefficients and u are int16_t, products and sums int32_t. `q31`: θ,
 * coefficients and u are int32_t, products and sums int64_t. The caller scales θ_j to
 * θq_j = round(θ_j · 2^thetaFrac[j]) (the header lists thetaFrac) and reads u_i = uq_i · 2^−uFrac.
 *
 * Scaling. A coefficient array c (tree planes, region rows, law gains) has one shift s:
 * c_q[i][j] = round(c[i][j] · 2^(s − thetaFrac[j])), so that Σ_j c_q θq_j ≈ 2^s · c·θ, and its
 * constants (plane and region bounds, law offsets) are stored at 2^s in the accumulator type.
 * s is the largest shift for which every coefficient fits the coefficient type and the interval
 * bound of every accumulation fits the accumulator (the overflow proof, `overflowProof`).
 *
 * Region test. The worst rounding error of the integer dot product of row i is
 * E_i = Σ_j (|2^(s−t_j) a_ij| + Θq_j) / 2 (coefficient rounding ≤ ½ unit times |θq| ≤ Θq, θ rounding
 * ≤ 1 unit — rounding or truncation by the caller — times the exact coefficient). The bound is
 * stored without slack, bq = round(b·2^s), and each region has one slack S ≥ tol.inside·2^s + E_i
 * + ½ + 1 over its rows: a row holds when Σ a_q θq − bq ≤ S, so every θ with a·θ ≤ b + tol.inside
 * passes in fixed point too (no point of a region is lost to rounding). Among the candidates that
 * hold θ the one with the smallest largest residual Σ a_q θq − bq wins (best fit, as the float
 * build): the residual is within S of 2^s·(a·θ − b), so θ goes to a neighbour only within the
 * rounding of the residuals, never by the width of a slack. Tree planes: `fixedPlaneMargin`.
 *
 * u. acc = g_q + Σ_j F_q θq_j ≈ 2^sF · u, then uq = floor((acc + 2^(k−1)) / 2^k), k = sF − uFrac,
 * computed on the unsigned type as ((acc + 2^(W−1) + 2^(k−1)) >> k) − 2^(W−1−k): well defined in
 * C99 (no right shift of a negative number, no division), exact by the overflow proof.
 */
import { tol } from '../tol.js';
import type { TableFile } from '../table/format.js';
import type { SearchTree } from '../partition/tree.js';
import { costFigures, searchIndex, type ArrayEvaluation, type SearchIndex, type SearchKind } from './arrays.js';
import { layoutArray, structureLayout, type LayoutArray } from './layout.js';

export type FixedFormat = 'q15' | 'q31';
export const FIXED_FORMATS: readonly FixedFormat[] = ['q15', 'q31'];

/** Bit widths of a format: coefficients, θ and u (`word`), products and sums (`acc`). */
export function formatBits(f: FixedFormat): { word: 16 | 32; acc: 32 | 64 } {
  return f === 'q15' ? { word: 16, acc: 32 } : { word: 32, acc: 64 };
}

/** A scaling that cannot be realised without overflow (user-chosen θ fractions, absurd data). */
export class FixedOverflowError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'FixedOverflowError';
  }
}

export interface FixedOptions {
  /** θ fraction bits per component, forced by the caller (default: the most that fit the box) */
  thetaFrac?: number[];
}

/** One accumulation family of the proof: the largest interval bound over its rows against the limit. */
export interface OverflowCheck {
  what: string;
  rows: number;
  /** largest |value| any partial sum (or rounding step) of any row can reach */
  bound: bigint;
  limit: bigint;
  /** log2(limit / bound): bits to spare */
  headroomBits: number;
}

export interface OverflowProof {
  format: FixedFormat;
  accBits: number;
  wordBits: number;
  checks: OverflowCheck[];
  ok: boolean;
  text: string;
}

export interface FixedBuild extends SearchIndex {
  precision: FixedFormat;
  search: SearchKind;
  ntheta: number;
  nu: number;
  regionCount: number;
  wordBits: 16 | 32;
  accBits: 32 | 64;
  thetaFrac: number[];
  /** accepted integer box: the generated code returns −1 outside it (this keeps the proof valid) */
  thetaLo: bigint[];
  thetaHi: bigint[];
  /** shifts of the coefficient arrays (2^s scaling of Σ c_q θq) */
  nodeShift: number;
  regionShift: number;
  lawShift: number;
  uFrac: number;
  /** right shift of the law accumulator to u: lawShift − uFrac */
  outShift: number;
  nodeA: bigint[];
  nodeB: bigint[];
  regionA: bigint[];
  regionB: bigint[];
  lawF: bigint[];
  lawG: bigint[];
  /**
   * per region the slack of its test in accumulator units: a row holds when
   * Σ_j region_a·θq − region_b ≤ regionSlack[r], region_b = round(b·2^s) without slack (see buildFixed)
   */
  regionSlack: bigint[];
  /**
   * best fit over the candidates (as the float build): among the regions that hold θ within their
   * slack the one with the smallest largest slack-free residual wins (ties: the first scanned, leaves
   * list regions in ascending index); a residual ≤ fitSure (−2·max regionSlack) ends the scan early
   */
  bestFit: true;
  fitSure: bigint;
  /** largest region-test slack, in θ·a units (real) */
  slack: number;
  /** proven bound of |u_fixed − u_exact| when the point is located in the same region (per build, in u units) */
  lawErrorBound: number;
  proof: OverflowProof;
}

const pow2 = (e: number): number => 2 ** e;
const big = (x: number): bigint => BigInt(Math.round(x));
const absB = (x: bigint): bigint => (x < 0n ? -x : x);
const maxB = (xs: bigint[]): bigint => xs.reduce((m, v) => (absB(v) > m ? absB(v) : m), 0n);

/** Largest t with ceil(m · 2^t) + 1 ≤ max (m > 0), capped so the format keeps sane shifts. */
function fracFor(m: number, max: number): number {
  if (!(m > 0)) return 0;
  let t = Math.floor(Math.log2((max - 1) / m));
  while (Math.ceil(m * pow2(t)) + 1 > max) t--;
  while (Math.ceil(m * pow2(t + 1)) + 1 <= max) t++;
  return t;
}

interface Rows {
  /** coefficient rows (real), each of length nθ */
  coef: number[][];
}

/**
 * Largest shift s for which every coefficient fits `wordMax` and Σ|c_q|·Θq + extra(s, row) fits
 * `accMax`. Returns the quantised coefficients too.
 */
function chooseShift(rows: Rows, thetaFrac: number[], thetaMaxQ: bigint[], wordMax: bigint, accMax: bigint, extra: (s: number, row: number) => bigint): { s: number; q: bigint[][] } {
  const n = thetaFrac.length;
  let cmax = 0;
  for (const r of rows.coef) for (let j = 0; j < n; j++) cmax = Math.max(cmax, Math.abs(r[j]) * pow2(-thetaFrac[j]));
  // start from the shift that fills the coefficient type, then step down until everything fits
  let s = cmax > 0 ? Math.floor(Math.log2(Number(wordMax) / cmax)) + 1 : 0;
  for (; s > -1100; s--) {
    let ok = true;
    const q: bigint[][] = [];
    for (let i = 0; i < rows.coef.length && ok; i++) {
      const row = rows.coef[i].map((c, j) => big(c * pow2(s - thetaFrac[j])));
      let acc = extra(s, i);
      for (let j = 0; j < n; j++) {
        if (absB(row[j]) > wordMax) ok = false;
        acc += absB(row[j]) * thetaMaxQ[j];
      }
      if (acc > accMax) ok = false;
      q.push(row);
    }
    if (ok) return { s, q };
  }
  throw new FixedOverflowError('no scaling fits the accumulator');
}

/** Floor of x as a bigint, lowered by the double's own rounding error so that the result is ≤ the exact value. */
function floorSafe(x: number): bigint {
  const ulp = Math.abs(x) * 2 ** -52;
  return BigInt(Math.floor(x)) - BigInt(Math.ceil(ulp));
}

/**
 * The fixed-point build of a table (`q15`/`q31`): per-array power-of-two scalings chosen from the
 * data, integer arrays, θ fractions for the caller, and the overflow proof over the θ box. Throws
 * FixedOverflowError when no scaling fits. New data, owned by the caller.
 */
export function buildFixed(table: TableFile, format: FixedFormat, search: SearchKind, tree: SearchTree | null, options: FixedOptions = {}): FixedBuild {
  const n = table.dims.ntheta;
  const nu = table.dims.nu;
  if (!(n >= 1)) throw new Error('the generated code needs at least one parameter');
  const { word, acc } = formatBits(format);
  const wordMax = (1n << BigInt(word - 1)) - 1n;
  const accMax = (1n << BigInt(acc - 1)) - 1n;

  // θ scaling from the box (widened by tol.inside so that points the double law locates on the
  // box boundary are accepted), or forced by the caller
  const lo = table.box.lower.map((v) => v - tol.inside);
  const hi = table.box.upper.map((v) => v + tol.inside);
  const thetaFrac = lo.map((l, j) => fracFor(Math.max(Math.abs(l), Math.abs(hi[j])), Number(wordMax)));
  if (options.thetaFrac) {
    if (options.thetaFrac.length !== n) throw new FixedOverflowError(`θ fractions: expected ${n} values, got ${options.thetaFrac.length}`);
    options.thetaFrac.forEach((t, j) => {
      if (!Number.isInteger(t) || t < -64 || t > 64) throw new FixedOverflowError(`θ fraction of ${table.thetaNames[j]} must be an integer in [-64, 64], got ${t}`);
      const m = Math.max(Math.abs(lo[j]), Math.abs(hi[j]));
      const q = Math.ceil(m * pow2(t)) + 1;
      if (q > Number(wordMax))
        throw new FixedOverflowError(
          `θ[${j}] (${table.thetaNames[j]}) overflows int${word}_t: its box bound ${m.toPrecision(6)} at 2^${t} is ${q} > ${wordMax}; use at most ${thetaFrac[j]} fraction bits`,
        );
      thetaFrac[j] = t;
    });
  }
  const thetaLo = lo.map((l, j) => BigInt(Math.floor(l * pow2(thetaFrac[j]))) - 1n);
  const thetaHi = hi.map((h, j) => BigInt(Math.ceil(h * pow2(thetaFrac[j]))) + 1n);
  const thetaMaxQ = thetaLo.map((l, j) => (absB(l) > absB(thetaHi[j]) ? absB(l) : absB(thetaHi[j])));
  const thetaMaxSum = (row: number[], s: number): number => row.reduce((acc2, c, j) => acc2 + Math.abs(c) * pow2(s - thetaFrac[j]), 0);

  // region rows: the bound b + tol.inside + E at 2^s must fit too
  const regionRows: number[][] = [];
  const regionBReal: number[] = [];
  const regionRowStart = [0];
  for (const r of table.regions) {
    r.A.forEach((row, i) => {
      regionRows.push(row.slice(0, n));
      regionBReal.push(r.b[i]);
    });
    regionRowStart.push(regionRows.length);
  }
  const rowSlack = (s: number, i: number): number => (thetaMaxSum(regionRows[i], s) + thetaMaxQ.reduce((a, v) => a + Number(v), 0)) / 2;
  // slack-free bounds bq = round(b·2^s) and per region one slack S = max over its rows of
  // ceil(tol.inside·2^s + E_i + ½ + the double's error of b·2^s) + 1: a θ with a·θ ≤ b + tol.inside
  // has Σ a_q θq ≤ 2^s·a·θ + E_i ≤ bq_i + S, so no point of a region is lost; and the residual
  // Σ a_q θq − bq differs from 2^s·(a·θ − b) by less than S, which is what best fit ranks by
  const rowResidualSlack = (s: number, i: number): bigint => BigInt(Math.ceil(tol.inside * pow2(s) + rowSlack(s, i) + 0.5 + Math.abs(regionBReal[i]) * pow2(s) * 2 ** -52)) + 1n;
  const reg = chooseShift({ coef: regionRows }, thetaFrac, thetaMaxQ, wordMax, accMax, (s, i) => {
    // the residual Σ a_q θq − bq and the slack must fit the accumulator
    const b = absB(big(regionBReal[i] * pow2(s))) + rowResidualSlack(s, i);
    return b > accMax ? accMax + 1n : b;
  });
  const regionA = reg.q.flat();
  const regionB = regionBReal.map((v) => big(v * pow2(reg.s)));
  const regionSlack: bigint[] = [];
  for (let r = 0; r < table.regions.length; r++) {
    let m = 0n;
    for (let i = regionRowStart[r]; i < regionRowStart[r + 1]; i++) {
      const v = rowResidualSlack(reg.s, i);
      if (v > m) m = v;
    }
    regionSlack.push(m);
  }
  const maxRegionSlack = regionSlack.reduce((m, v) => (v > m ? v : m), 0n);
  let slack = 0;
  regionSlack.forEach((v) => (slack = Math.max(slack, Number(v) / pow2(reg.s))));

  // tree planes
  const nodeRows: number[][] = [];
  const nodeBReal: number[] = [];
  if (search === 'tree') {
    if (!tree) throw new Error('tree search needs a search tree');
    if (tree.regionCount !== table.regions.length || tree.ntheta !== n) throw new Error('search tree does not match the table');
    for (const k of tree.nodeHyperplane) {
      nodeRows.push(tree.hyperplanes.a[k].slice(0, n));
      nodeBReal.push(tree.hyperplanes.b[k]);
    }
  }
  const node = chooseShift({ coef: nodeRows }, thetaFrac, thetaMaxQ, wordMax, accMax, (s, i) => (absB(big(nodeBReal[i] * pow2(s))) > accMax ? accMax + 1n : 0n));
  const nodeA = node.q.flat();
  const nodeB = nodeBReal.map((b) => big(b * pow2(node.s)));

  // laws: u range from the box decides uFrac; the accumulator holds g_q + Σ F_q θq + the rounding half
  const lawRows: number[][] = [];
  const lawGReal: number[] = [];
  let uMax = 0;
  for (const r of table.regions)
    r.law.F.forEach((row, i) => {
      lawRows.push(row.slice(0, n));
      lawGReal.push(r.law.g[i]);
      let m = Math.abs(r.law.g[i]);
      for (let j = 0; j < n; j++) m += Math.abs(row[j]) * Math.max(Math.abs(lo[j]), Math.abs(hi[j]));
      uMax = Math.max(uMax, m);
    });
  const uFracWanted = fracFor(uMax, Number(wordMax));
  const law = chooseShift({ coef: lawRows }, thetaFrac, thetaMaxQ, wordMax, accMax, (s, i) => {
    const k = Math.max(0, s - uFracWanted);
    return absB(big(lawGReal[i] * pow2(s))) + (k > 0 ? 1n << BigInt(k - 1) : 0n);
  });
  const lawF = law.q.flat();
  const lawG = lawGReal.map((g) => big(g * pow2(law.s)));
  let uFrac = Math.min(uFracWanted, law.s);
  // the output must fit the word after the shift (integer bound of the accumulator)
  const lawAcc = lawRows.map((_, i) => {
    let a = absB(lawG[i]);
    for (let j = 0; j < n; j++) a += absB(lawF[i * n + j]) * thetaMaxQ[j];
    return a;
  });
  const lawAccMax = lawAcc.reduce((m, v) => (v > m ? v : m), 0n);
  const outFits = (uf: number): boolean => {
    const k = law.s - uf;
    const half = k > 0 ? 1n << BigInt(k - 1) : 0n;
    return (lawAccMax + half) >> BigInt(k) <= wordMax && k <= acc - 1;
  };
  while (!outFits(uFrac)) uFrac--;
  const outShift = law.s - uFrac;

  // proven law error in the same region: coefficient and offset rounding ½ unit each (plus the
  // double's own error for large offsets), θ rounding ½ unit (round to nearest), output ½ LSB
  let lawErr = 0;
  lawRows.forEach((row, i) => {
    const gErr = 0.5 + Math.abs(lawGReal[i]) * pow2(law.s) * 2 ** -52;
    let e = gErr;
    for (let j = 0; j < n; j++) e += 0.5 * Number(thetaMaxQ[j]) + 0.5 * Math.abs(row[j]) * pow2(law.s - thetaFrac[j]);
    lawErr = Math.max(lawErr, e * pow2(-law.s));
  });
  lawErr += outShift > 0 ? 0.5 * pow2(-uFrac) : 0;

  const b: FixedBuild = {
    precision: format,
    search,
    ntheta: n,
    nu,
    regionCount: table.regions.length,
    wordBits: word,
    accBits: acc,
    thetaFrac,
    thetaLo,
    thetaHi,
    nodeShift: node.s,
    regionShift: reg.s,
    lawShift: law.s,
    uFrac,
    outShift,
    nodeA,
    nodeB,
    regionA,
    regionB,
    lawF,
    lawG,
    ...searchIndex(search, tree, regionRowStart),
    regionSlack,
    bestFit: true,
    // early exit: the same argument as the float build (arrays.ts, fitSure), with the residual error < S_X
    fitSure: -2n * maxRegionSlack,
    slack,
    lawErrorBound: lawErr,
    proof: { format, accBits: acc, wordBits: word, checks: [], ok: false, text: '' },
  };
  b.proof = overflowProof(b);
  if (!b.proof.ok) throw new FixedOverflowError(b.proof.text);
  return b;
}

/**
 * Interval bounds of every integer quantity of the generated code, from the accepted θ box
 * (|θq_j| ≤ max(|lo_j|, |hi_j|), enforced by the code's box check) and the stored integers:
 * a partial sum of Σ c_q θq is at most Σ |c_q|·Θq in magnitude whatever the order, so one bound
 * per row covers every intermediate; the law adds |g_q| and the rounding half. Each must fit the
 * accumulator; every stored coefficient, θ bound and output the word.
 */
export function overflowProof(b: FixedBuild): OverflowProof {
  const n = b.ntheta;
  const wordMax = (1n << BigInt(b.wordBits - 1)) - 1n;
  const accMax = (1n << BigInt(b.accBits - 1)) - 1n;
  const thetaMaxQ = b.thetaLo.map((l, j) => (absB(l) > absB(b.thetaHi[j]) ? absB(l) : absB(b.thetaHi[j])));
  const dotBound = (c: bigint[], i: number): bigint => {
    let s = 0n;
    for (let j = 0; j < n; j++) s += absB(c[i * n + j]) * thetaMaxQ[j];
    return s;
  };
  const half = b.outShift > 0 ? 1n << BigInt(b.outShift - 1) : 0n;
  const rowsOf = (c: bigint[]) => c.length / n;
  const check = (what: string, rows: number, bound: bigint, limit: bigint): OverflowCheck => ({
    what,
    rows,
    bound,
    limit,
    headroomBits: bound > 0n ? Math.log2(Number(limit)) - Math.log2(Number(bound)) : Infinity,
  });
  const range = (k: number, f: (i: number) => bigint): bigint => {
    let m = 0n;
    for (let i = 0; i < k; i++) {
      const v = f(i);
      if (v > m) m = v;
    }
    return m;
  };
  const lawAcc = range(rowsOf(b.lawF), (i) => absB(b.lawG[i]) + dotBound(b.lawF, i) + half);
  const checks: OverflowCheck[] = [
    check(`θ box (int${b.wordBits}_t input)`, n, maxB([...b.thetaLo, ...b.thetaHi]), wordMax),
    check(`coefficients (int${b.wordBits}_t)`, 0, maxB([...b.nodeA, ...b.regionA, ...b.lawF]), wordMax),
    check(`tree plane sums a·θ (int${b.accBits}_t)`, rowsOf(b.nodeA), range(rowsOf(b.nodeA), (i) => dotBound(b.nodeA, i)), accMax),
    check(`tree plane bounds (int${b.accBits}_t)`, b.nodeB.length, maxB(b.nodeB), accMax),
    check(`region row sums a·θ (int${b.accBits}_t)`, rowsOf(b.regionA), range(rowsOf(b.regionA), (i) => dotBound(b.regionA, i)), accMax),
    check(`region row bounds (int${b.accBits}_t)`, b.regionB.length, maxB(b.regionB), accMax),
    check(
      `region residuals a·θ − b and slacks (int${b.accBits}_t)`,
      rowsOf(b.regionA),
      range(rowsOf(b.regionA), (i) => dotBound(b.regionA, i) + absB(b.regionB[i])),
      accMax,
    ),
    check(`early-exit bound -2 x region slack (int${b.accBits}_t)`, 1, absB(b.fitSure), accMax),
    check(`law sums g + F·θ + rounding half (int${b.accBits}_t)`, rowsOf(b.lawF), lawAcc, accMax),
    check(`output u after >> ${b.outShift} (int${b.wordBits}_t)`, b.nu, (lawAcc) >> BigInt(b.outShift), wordMax),
    check('output shift', 1, BigInt(b.outShift), BigInt(b.accBits - 1)),
  ];
  const bad = checks.filter((c) => c.bound > c.limit);
  const text = bad.length
    ? `${b.precision}: overflow: ` + bad.map((c) => `${c.what} can reach ${c.bound} > ${c.limit}`).join('; ')
    : `${b.precision}: no overflow: ` + checks.filter((c) => c.what !== 'output shift').map((c) => `${c.what} ≤ ${c.bound} (${Number.isFinite(c.headroomBits) ? c.headroomBits.toFixed(1) : '∞'} bits spare)`).join('; ');
  return { format: b.precision, accBits: b.accBits, wordBits: b.wordBits, checks, ok: bad.length === 0, text };
}

/** θ as the caller is told to scale it: round(θ_j · 2^thetaFrac[j]) (half away from zero), saturated to the word. */
export function quantizeTheta(b: FixedBuild, theta: ArrayLike<number>): bigint[] | null {
  const wordMax = (1n << BigInt(b.wordBits - 1)) - 1n;
  const out: bigint[] = [];
  for (let j = 0; j < b.ntheta; j++) {
    const x = theta[j] * pow2(b.thetaFrac[j]);
    if (Number.isNaN(x)) return null; // a NaN sensor reading has no integer image; the caller must handle it
    let q = x === Infinity ? wordMax : x === -Infinity ? -wordMax - 1n : BigInt(Math.sign(x) * Math.round(Math.abs(x)));
    if (q > wordMax) q = wordMax;
    if (q < -wordMax - 1n) q = -wordMax - 1n;
    out.push(q);
  }
  return out;
}

export interface FixedEvaluation extends ArrayEvaluation {
  /** the integer outputs uq (u = uq · 2^−uFrac) */
  uq: bigint[] | null;
}

/** The generated code's integer arithmetic on already scaled θq, exactly (BigInt). */
export function evaluateFixedQ(b: FixedBuild, tq: bigint[]): FixedEvaluation {
  const n = b.ntheta;
  const none: FixedEvaluation = { region: -1, u: null, uq: null };
  for (let j = 0; j < n; j++) if (tq[j] < b.thetaLo[j] || tq[j] > b.thetaHi[j]) return none;
  const dot = (c: bigint[], at: number): bigint => {
    let s = 0n;
    for (let j = 0; j < n; j++) s += c[at + j] * tq[j];
    return s;
  };
  // largest slack-free residual of region r, or null when a row exceeds the region's slack
  const fit = (r: number): bigint | null => {
    let worst = 0n;
    for (let i = b.regionRowStart[r]; i < b.regionRowStart[r + 1]; i++) {
      const d = dot(b.regionA, i * n) - b.regionB[i];
      if (d > b.regionSlack[r]) return null;
      if (i === b.regionRowStart[r] || d > worst) worst = d;
    }
    return worst;
  };
  const scan = (count: number, regionAt: (k: number) => number): FixedEvaluation => {
    let best = -1;
    let bestRes = 0n;
    for (let k = 0; k < count; k++) {
      const q = fit(regionAt(k));
      if (q !== null && (best < 0 || q < bestRes)) {
        best = regionAt(k);
        bestRes = q;
        if (q <= b.fitSure) break; // deep inside: no other candidate can fit better
      }
    }
    return best < 0 ? none : law(best);
  };
  const bias = 1n << BigInt(b.accBits - 1);
  const half = b.outShift > 0 ? 1n << BigInt(b.outShift - 1) : 0n;
  const sh = BigInt(b.outShift);
  const law = (r: number): FixedEvaluation => {
    const uq: bigint[] = [];
    for (let i = 0; i < b.nu; i++) {
      const row = r * b.nu + i;
      const acc = b.lawG[row] + dot(b.lawF, row * n);
      uq.push(b.outShift > 0 ? ((acc + bias + half) >> sh) - (bias >> sh) : acc);
    }
    return { region: r, uq, u: uq.map((v) => Number(v) * pow2(-b.uFrac)) };
  };
  if (b.search === 'sequential') return scan(b.regionCount, (r) => r);
  let ref = b.root;
  for (let d = 0; d < b.maxDepth && ref >= 0; d++) ref = dot(b.nodeA, ref * n) <= b.nodeB[ref] ? b.nodeLeft[ref] : b.nodeRight[ref];
  if (ref >= 0) return none;
  const leaf = -ref - 1;
  return scan(b.leafStart[leaf + 1] - b.leafStart[leaf], (k) => b.leafRegion[b.leafStart[leaf] + k]);
}

/** Evaluate at a real θ: scale it as the caller is told to, then run the integer arithmetic. */
export function evaluateFixed(b: FixedBuild, theta: ArrayLike<number>): FixedEvaluation {
  const tq = quantizeTheta(b, theta);
  return tq ? evaluateFixedQ(b, tq) : { region: -1, u: null, uq: null };
}

/** Language-neutral layout of a fixed build. */
export function fixedLayout(b: FixedBuild): LayoutArray[] {
  const w = b.wordBits;
  const a = b.accBits;
  const cols = (s: number) => b.thetaFrac.map((t) => s - t);
  const bounds = [layoutArray('theta_lo', 'q-fixed', b.thetaLo, { bits: w, frac: b.thetaFrac }), layoutArray('theta_hi', 'q-fixed', b.thetaHi, { bits: w, frac: b.thetaFrac })];
  return [
    ...bounds,
    ...structureLayout(
      b,
      [layoutArray('node_a', 'q-fixed', b.nodeA, { bits: w, frac: cols(b.nodeShift) }), layoutArray('node_b', 'q-fixed', b.nodeB, { bits: a, frac: [b.nodeShift] })],
      [
        layoutArray('region_a', 'q-fixed', b.regionA, { bits: w, frac: cols(b.regionShift) }),
        layoutArray('region_b', 'q-fixed', b.regionB, { bits: a, frac: [b.regionShift] }),
        layoutArray('region_slack', 'q-fixed', b.regionSlack, { bits: a, frac: [b.regionShift] }),
        layoutArray('law_f', 'q-fixed', b.lawF, { bits: w, frac: cols(b.lawShift) }),
        layoutArray('law_g', 'q-fixed', b.lawG, { bits: a, frac: [b.lawShift] }),
      ],
    ),
  ];
}

/** Operation counts of a fixed build (same structure as the float one). */
export function fixedCostFigures(b: FixedBuild) {
  return costFigures(b, 'single'); // the fixed-point descent tests one plane per level
}

/** How a fixed build's arrays fit together, in words (the JSON export's `layout`). */
export const FIXED_LAYOUT_TEXT =
  'integers; θq_j = round(θ_j·2^thetaFrac[j]) must lie in [theta_lo[j], theta_hi[j]] (else no region); node child r >= 0 is a node, r < 0 is leaf -r-1; node k: left when Σ_j node_a[k*nt+j]·θq_j <= node_b[k]; region r rows region_row_start[r]..[r+1], inside when Σ_j region_a[i*nt+j]·θq_j − region_b[i] <= region_slack[r] (region_b without slack), best fit: among the candidates that hold θ the smallest largest residual wins (ties: the first in the leaf), a residual <= -2·max region_slack ends the scan; acc = law_g[r*nu+i] + Σ_j law_f[(r*nu+i)*nt+j]·θq_j, u_q = floor((acc + 2^(k-1)) / 2^k) with k = scaling.shifts.output, u = u_q·2^-uFrac; sums need the accumulator width of the format (32 bits for q15, 64 for q31)';

/**
 * Side overlap that makes a hyperplane descent safe in fixed point (`q15`/`q31`), for
 * `TreeOptions.margin`: twice a bound on |a_q·θ_q − b_q − (a·θ − b)| in θ units, from θ rounded to
 * its fraction bits (≤ 1 LSB per component, counted in full), the plane coefficients and offset
 * rounded to the node shift (≤ ½·2^−s each, with 2^−s bounded from the largest coefficient of any
 * region row, the word size and log2(nθ + 2) bits of accumulator headroom), plus tol.radius.
 * Conservative: a larger margin only copies more regions to both sides of a split.
 */
export function fixedPlaneMargin(table: TableFile, format: FixedFormat, thetaFracOverride?: readonly number[]): number {
  const n = table.dims.ntheta;
  const wordMax = 2 ** (formatBits(format).word - 1) - 1;
  const thMax = table.box.lower.map((l, j) => Math.max(Math.abs(l - tol.inside), Math.abs(table.box.upper[j] + tol.inside)));
  const frac = thMax.map((m, j) => thetaFracOverride?.[j] ?? fracFor(m, wordMax));
  let aMax = 0;
  for (const r of table.regions) for (const row of r.A) for (let j = 0; j < n; j++) aMax = Math.max(aMax, Math.abs(row[j]));
  const stepS = (2 * aMax * 2 ** Math.ceil(Math.log2(n + 2))) / wordMax; // ≥ 2^−s
  const thetaSum = thMax.reduce((s, m, j) => s + m + pow2(-frac[j]), 0);
  let worst = 0;
  for (const r of table.regions)
    for (const row of r.A) {
      let q = 0;
      for (let j = 0; j < n; j++) q += Math.abs(row[j]) * pow2(-frac[j]);
      worst = Math.max(worst, q + (stepS / 2) * thetaSum + stepS / 2);
    }
  return 2 * worst + tol.radius;
}
