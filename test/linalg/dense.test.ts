import { describe, it, expect } from 'vitest';
import { mathjs } from '../../src/problem/mathjs.js';
import { tol } from '../../src/tol.js';
import {
  choleskyInPlace,
  choleskySolveInPlace,
  choleskyOfBlock,
  choleskySolveStrided,
  spdInverse,
  matMul,
  transpose,
  luSolve,
  fromRows,
  toRows,
} from '../../src/linalg/dense.js';
import { rng, randMat, randSpd } from '../problem/rng.js';

// Reference for every check in this file: mathjs (general-purpose math library, loaded the same way
// the problem layer loads it) — multiply, transpose, inv, lusolve, det, eigs.
const math = mathjs();

/** agreement of two results computed by different round-off paths, relative to the data scale */
const AGREE = 1e-9;
const sizes = Array.from({ length: 12 }, (_, i) => i + 1);

function maxAbs(a: ArrayLike<number>): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) s = Math.max(s, Math.abs(a[i]));
  return s;
}
function maxDiff(a: number[][], b: number[][]): number {
  let s = 0;
  a.forEach((row, i) => row.forEach((v, j) => (s = Math.max(s, Math.abs(v - b[i][j])))));
  return s;
}
const asRows = (m: unknown): number[][] => (math.matrix(m as number[][]).toArray() as number[][]).map((r) => (Array.isArray(r) ? r : [r]));
function lowerOf(l: Float64Array, n: number): number[][] {
  return Array.from({ length: n }, (_, i) => Array.from({ length: n }, (_, j) => (j <= i ? l[i * n + j] : 0)));
}

describe('matMul and transpose = mathjs multiply / transpose (seeded, sizes 1..12)', () => {
  for (const n of sizes) {
    it(`r=${n}, k=${((n * 7) % 12) + 1}, c=${((n * 5) % 12) + 1}`, () => {
      const r = rng(1000 + n);
      const k = ((n * 7) % 12) + 1;
      const c = ((n * 5) % 12) + 1;
      const A = randMat(r, n, k, 3);
      const B = randMat(r, k, c, 2);
      // sprinkle exact zeros: the kernel skips zero entries of A
      A.forEach((row) => row.forEach((_, j) => r() < 0.3 && (row[j] = 0)));
      const got = toRows(matMul(fromRows(A, k), fromRows(B, c), n, k, c), n, c);
      const ref = asRows(math.multiply(A, B));
      expect(maxDiff(got, ref)).toBeLessThanOrEqual(AGREE * (1 + 6 * k));
      const At = toRows(transpose(fromRows(A, k), n, k), k, n);
      expect(At).toEqual(asRows(math.transpose(A))); // transpose moves values exactly
    });
  }
});

describe('choleskyInPlace: L Lᵀ = A, L lower with positive diagonal, det A = Π L_ii² (mathjs)', () => {
  for (const n of sizes) {
    it(`n=${n}`, () => {
      const r = rng(2000 + n);
      const A = randSpd(r, n, 0.5);
      const a = fromRows(A, n);
      const upperBefore = toRows(a, n, n);
      expect(choleskyInPlace(a, n, tol.pd)).toBe(true);
      const L = lowerOf(a, n);
      for (let i = 0; i < n; i++) expect(L[i][i]).toBeGreaterThan(0);
      const LLt = asRows(math.multiply(L, math.transpose(L)));
      expect(maxDiff(LLt, A)).toBeLessThanOrEqual(AGREE * (1 + maxAbs(a)));
      // the strict upper triangle is documented as left as is
      for (let i = 0; i < n; i++) for (let j = i + 1; j < n; j++) expect(a[i * n + j]).toBe(upperBefore[i][j]);
      let prod = 1;
      for (let i = 0; i < n; i++) prod *= L[i][i] * L[i][i];
      const det = math.det(A) as number;
      expect(Math.abs(prod - det)).toBeLessThanOrEqual(1e-8 * Math.abs(det));
    });
  }
});

describe('choleskySolveInPlace = mathjs lusolve on SPD systems', () => {
  for (const n of sizes) {
    it(`n=${n}, Float64Array and number[] right-hand sides`, () => {
      const r = rng(3000 + n);
      const A = randSpd(r, n, 1);
      const rhs = Array.from({ length: n }, () => 4 * r() - 2);
      const l = fromRows(A, n);
      expect(choleskyInPlace(l, n, tol.pd)).toBe(true);
      const x = Float64Array.from(rhs);
      choleskySolveInPlace(l, n, x);
      const xs = rhs.slice();
      choleskySolveInPlace(l, n, xs);
      const ref = (math.lusolve(A, rhs) as number[][]).map((row) => row[0]);
      const scale = 1 + maxAbs(ref);
      for (let i = 0; i < n; i++) {
        expect(Math.abs(x[i] - ref[i])).toBeLessThanOrEqual(1e-8 * scale);
        expect(xs[i]).toBe(x[i]);
      }
    });
  }
});

describe('spdInverse = mathjs inv, exactly symmetric', () => {
  for (const n of sizes) {
    it(`n=${n}`, () => {
      const r = rng(4000 + n);
      const A = randSpd(r, n, 0.8);
      const a = fromRows(A, n);
      const copy = Float64Array.from(a);
      const inv = spdInverse(a, n, tol.pd);
      expect(inv).not.toBeNull();
      expect(a).toEqual(copy); // input untouched
      const got = toRows(inv!, n, n);
      const ref = asRows(math.inv(A));
      const scale = 1 + Math.max(...ref.map((row) => maxAbs(row)));
      expect(maxDiff(got, ref)).toBeLessThanOrEqual(1e-8 * scale);
      for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) expect(got[i][j]).toBe(got[j][i]);
    });
  }
});

/**
 * The textbook Cholesky inverse, one column at a time (common practice: L y = e_j by forward
 * substitution, then Lᵀ x = y backward, each entry one sum in index order), written out here
 * literally. spdInverse solves four columns side by side and choleskyInPlace two rows side by side;
 * the sums and their order are the same, so the bits must be too (regions are compared byte for byte
 * across runs). Sizes up to 45 (M_AA of a 40-move horizon) cover every remainder of the groups.
 */
function textbookInverse(A: Float64Array, n: number): Float64Array | null {
  const l = Float64Array.from(A);
  let scale = 0;
  for (let i = 0; i < n; i++) scale = Math.max(scale, Math.abs(l[i * n + i]));
  const thr = tol.pd * (1 + scale);
  for (let j = 0; j < n; j++) {
    let d = l[j * n + j];
    for (let k = 0; k < j; k++) d -= l[j * n + k] * l[j * n + k];
    if (!(d > thr)) return null;
    const ljj = Math.sqrt(d);
    l[j * n + j] = ljj;
    for (let i = j + 1; i < n; i++) {
      let s = l[i * n + j];
      for (let k = 0; k < j; k++) s -= l[i * n + k] * l[j * n + k];
      l[i * n + j] = s / ljj;
    }
  }
  const inv = new Float64Array(n * n);
  const col = new Float64Array(n);
  for (let j = 0; j < n; j++) {
    col.fill(0);
    col[j] = 1 / l[j * n + j];
    for (let i = j + 1; i < n; i++) {
      let s = 0;
      for (let k = j; k < i; k++) s -= l[i * n + k] * col[k];
      col[i] = s / l[i * n + i];
    }
    for (let i = n - 1; i >= 0; i--) {
      let s = col[i];
      for (let k = i + 1; k < n; k++) s -= l[k * n + i] * col[k];
      col[i] = s / l[i * n + i];
    }
    for (let i = 0; i < n; i++) inv[i * n + j] = col[i];
  }
  for (let i = 0; i < n; i++)
    for (let j = 0; j < i; j++) {
      const v = 0.5 * (inv[i * n + j] + inv[j * n + i]);
      inv[i * n + j] = v;
      inv[j * n + i] = v;
    }
  return inv;
}

describe('spdInverse, four columns side by side: mathjs inv within round-off, the textbook column order bit for bit', () => {
  for (const n of [1, 2, 3, 4, 5, 6, 7, 8, 9, 13, 17, 22, 31, 40, 45]) {
    it(`n=${n}`, () => {
      const r = rng(7000 + n);
      const A = randSpd(r, n, 0.8);
      const a = fromRows(A, n);
      const scratch = { l: new Float64Array(0), inv: new Float64Array(0), col: new Float64Array(0) };
      const got = spdInverse(a, n, tol.pd, scratch)!;
      const ref = asRows(math.inv(A));
      const scale = 1 + Math.max(...ref.map((row) => maxAbs(row)));
      expect(maxDiff(toRows(got, n, n), ref)).toBeLessThanOrEqual(1e-8 * scale * n);
      const book = textbookInverse(a, n)!;
      for (let q = 0; q < n * n; q++) expect(Object.is(got[q], book[q])).toBe(true);
      // the scratch reused for a smaller matrix afterwards gives that matrix's bits too
      const m = Math.max(1, n - 3);
      const b = fromRows(randSpd(r, m, 0.8), m);
      const again = spdInverse(b, m, tol.pd, scratch)!;
      const bookB = textbookInverse(b, m)!;
      for (let q = 0; q < m * m; q++) expect(Object.is(again[q], bookB[q])).toBe(true);
    });
  }
});

describe('spdInverse and choleskyInPlace read only the lower triangle and the diagonal', () => {
  // the region builder fills only that part of M_AA; the upper triangle keeps another matrix's values
  for (const n of [1, 2, 5, 13, 26, 40]) {
    it(`n=${n}: NaN or stale values above the diagonal change no bit; mathjs inv of the full matrix agrees`, () => {
      const r = rng(9100 + n);
      const A = randSpd(r, n, 0.8);
      const full = fromRows(A, n);
      const want = Float64Array.from(spdInverse(full, n, tol.pd)!);
      const ref = asRows(math.inv(A));
      const scale = 1 + Math.max(...ref.map((row) => maxAbs(row)));
      expect(maxDiff(toRows(want, n, n), ref)).toBeLessThanOrEqual(1e-8 * scale * n);
      for (const junk of [NaN, 1e300, -7]) {
        const a = Float64Array.from(full);
        for (let i = 0; i < n; i++) for (let j = i + 1; j < n; j++) a[i * n + j] = junk;
        const scratch = { l: new Float64Array(0), inv: new Float64Array(0), col: new Float64Array(0) };
        const got = spdInverse(a, n, tol.pd, scratch)!;
        for (let q = 0; q < n * n; q++) expect(Object.is(got[q], want[q])).toBe(true);
        const l1 = Float64Array.from(full);
        const l2 = Float64Array.from(a);
        expect(choleskyInPlace(l1, n, tol.pd)).toBe(true);
        expect(choleskyInPlace(l2, n, tol.pd)).toBe(true);
        for (let i = 0; i < n; i++) for (let j = 0; j <= i; j++) expect(Object.is(l2[i * n + j], l1[i * n + j])).toBe(true);
      }
    });
  }
});

describe('luSolve = mathjs lusolve on general (non-symmetric) systems', () => {
  for (const n of sizes) {
    it(`n=${n}`, () => {
      const r = rng(5000 + n);
      // random matrix with a shrunken diagonal, so partial pivoting has to swap rows
      const A = randMat(r, n, n, 1);
      for (let i = 0; i < n; i++) A[i][i] *= 0.01;
      if (n === 1) A[0][0] = 0.37;
      // 1-norm condition number by mathjs scales the accepted forward error
      const cond = (math.norm(A, 1) as number) * (math.norm(math.inv(A), 1) as number);
      const rhs = Array.from({ length: n }, () => 2 * r() - 1);
      const m = fromRows(A, n);
      const b = Float64Array.from(rhs);
      const x = luSolve(m, n, b, tol.rank);
      expect(x).not.toBeNull();
      expect(Array.from(b)).toEqual(rhs); // b untouched
      const ref = (math.lusolve(A, rhs) as number[][]).map((row) => row[0]);
      const scale = 1 + maxAbs(ref);
      for (let i = 0; i < n; i++) expect(Math.abs(x![i] - ref[i])).toBeLessThanOrEqual(1e-13 * cond * scale);
      // residual of the kernel's own answer, computed by mathjs
      const res = (math.subtract(math.multiply(A, Array.from(x!)), rhs) as number[]).map(Math.abs);
      expect(Math.max(...res)).toBeLessThanOrEqual(1e-10 * (1 + maxAbs(m)) * scale * n);
    });
  }

  it('a zero leading entry needs a row swap (2×2 worked by hand: [[0,1],[1,0]] x = [3,4] → x = [4,3])', () => {
    const x = luSolve(fromRows([[0, 1], [1, 0]]), 2, Float64Array.from([3, 4]), tol.rank);
    expect(Array.from(x!)).toEqual([4, 3]);
  });
});

describe('failure cases', () => {
  for (const n of [2, 3, 5, 8, 12]) {
    it(`n=${n}: symmetric indefinite → choleskyInPlace false, spdInverse null (mathjs eigs confirms a negative eigenvalue)`, () => {
      const r = rng(6000 + n);
      const A = randSpd(r, n, 0.2);
      // subtract a multiple of a unit vector's outer product large enough to flip one eigenvalue
      const v = Array.from({ length: n }, () => 2 * r() - 1);
      const vn = Math.hypot(...v);
      const big = 10 * (1 + n);
      const B = A.map((row, i) => row.map((x, j) => x - (big * v[i] * v[j]) / (vn * vn)));
      const eig = math.eigs(B).values as unknown as number[] | { toArray(): number[] };
      const values = Array.isArray(eig) ? eig : eig.toArray();
      expect(Math.min(...values)).toBeLessThan(0);
      expect(choleskyInPlace(fromRows(B, n), n, tol.pd)).toBe(false);
      expect(spdInverse(fromRows(B, n), n, tol.pd)).toBeNull();
    });

    it(`n=${n}: PSD but singular (rank n−1) → not PD`, () => {
      const r = rng(6100 + n);
      const M = randMat(r, n, n - 1);
      const S = asRows(math.multiply(M, math.transpose(M)));
      expect(Math.abs(math.det(S) as number)).toBeLessThan(1e-9 * Math.max(1, ...S.map((row) => maxAbs(row))) ** n);
      expect(choleskyInPlace(fromRows(S, n), n, tol.pd)).toBe(false);
      expect(spdInverse(fromRows(S, n), n, tol.pd)).toBeNull();
    });

    it(`n=${n}: singular square system (one row a combination of two others) → luSolve null`, () => {
      const r = rng(6200 + n);
      const A = randMat(r, n, n, 1);
      const i = n - 1;
      A[i] = n >= 3 ? A[0].map((v, j) => 2 * v - 0.5 * A[1][j]) : A[0].map((v) => -3 * v);
      expect(Math.abs(math.det(A) as number)).toBeLessThan(1e-9);
      expect(luSolve(fromRows(A, n), n, new Float64Array(n).fill(1), tol.rank)).toBeNull();
    });
  }

  it('1×1: zero and negative pivots are rejected, a positive one is not', () => {
    expect(choleskyInPlace(Float64Array.of(0), 1, tol.pd)).toBe(false);
    expect(choleskyInPlace(Float64Array.of(-1), 1, tol.pd)).toBe(false);
    expect(spdInverse(Float64Array.of(4), 1, tol.pd)![0]).toBe(0.25);
    expect(luSolve(Float64Array.of(0), 1, Float64Array.of(1), tol.rank)).toBeNull();
    expect(choleskyInPlace(Float64Array.of(Number.NaN), 1, tol.pd)).toBe(false);
  });
});

/**
 * The textbook Cholesky–Banachiewicz factor, row by row (common practice: L_ij = (B_ij − Σ_{q<j}
 * L_iq L_jq) / L_jj, L_ii = √(B_ii − Σ_{q<i} L_iq²), sums in ascending q), with the pivot test
 * B's pivots > pivotTol·(1 + max |B_ii|), and the textbook forward / back substitution, written out
 * here literally on the gathered block. choleskyOfBlock keeps the rows above the first change of its
 * block between calls (the point QP appends and drops rows of its working set); the factor and the
 * solution must be these bits whatever the history, and L Lᵀ must be B (mathjs).
 */
function textbookCholeskySolve(B: number[][], pivotTol: number, rhs: number[]): { l: number[][]; x: number[] } | null {
  const n = B.length;
  let scale = 0;
  for (let i = 0; i < n; i++) scale = Math.max(scale, Math.abs(B[i][i]));
  const thr = pivotTol * (1 + scale);
  const l = B.map(() => new Array<number>(n).fill(0));
  for (let i = 0; i < n; i++) {
    for (let j = 0; j < i; j++) {
      let s = B[i][j];
      for (let q = 0; q < j; q++) s -= l[i][q] * l[j][q];
      l[i][j] = s / l[j][j];
    }
    let d = B[i][i];
    for (let q = 0; q < i; q++) d -= l[i][q] * l[i][q];
    if (!(d > thr)) return null;
    l[i][i] = Math.sqrt(d);
  }
  const x = rhs.slice();
  for (let i = 0; i < n; i++) {
    let s = x[i];
    for (let q = 0; q < i; q++) s -= l[i][q] * x[q];
    x[i] = s / l[i][i];
  }
  for (let i = n - 1; i >= 0; i--) {
    let s = x[i];
    for (let q = i + 1; q < n; q++) s -= l[q][i] * x[q];
    x[i] = s / l[i][i];
  }
  return { l, x };
}

describe('choleskyOfBlock with kept rows: the textbook factor and solution bit for bit after appends and drops; L Lᵀ = B (mathjs)', () => {
  for (const nc of [3, 8, 20, 45]) {
    it(`M ${nc}×${nc}, 60 steps of appends and drops`, () => {
      const r = rng(8300 + nc);
      const M = randSpd(r, nc, 0.6);
      const Mf = fromRows(M, nc);
      const stride = nc + 1;
      const l = new Float64Array(stride * stride).fill(Number.NaN);
      const piv = new Float64Array(stride);
      const active: number[] = [];
      let valid = 0;
      for (let step = 0; step < 60; step++) {
        // append an index not in the block (most steps) or drop one, as the point QP does
        const free = Array.from({ length: nc }, (_, i) => i).filter((i) => !active.includes(i));
        if (free.length > 0 && (active.length === 0 || r() < 0.65)) active.push(free[Math.floor(r() * free.length)]);
        else {
          const d = Math.floor(r() * active.length);
          active.splice(d, 1);
          valid = Math.min(valid, d);
        }
        const k = active.length;
        if (k === 0) continue;
        const B = active.map((a) => active.map((b) => M[a][b]));
        const rhs = active.map(() => r() - 0.5);
        const book = textbookCholeskySolve(B, tol.rank, rhs)!;
        expect(book).not.toBeNull();
        expect(choleskyOfBlock(Mf, nc, active, k, l, stride, piv, valid, tol.rank)).toBe(true);
        valid = k;
        for (let i = 0; i < k; i++) for (let j = 0; j <= i; j++) expect(Object.is(l[i * stride + j], book.l[i][j])).toBe(true);
        const x = Float64Array.from(rhs);
        choleskySolveStrided(l, stride, k, x);
        for (let i = 0; i < k; i++) expect(Object.is(x[i], book.x[i])).toBe(true);
        const L = book.l;
        const LLt = asRows(math.multiply(L, math.transpose(L)));
        expect(maxDiff(LLt, B)).toBeLessThanOrEqual(1e-12 * (1 + Math.max(...B.map((row) => maxAbs(row)))));
      }
    });
  }

  it('a repeated index makes the block singular: false, as the textbook test says; a grown diagonal re-tests kept pivots', () => {
    const r = rng(8400);
    const M = randSpd(r, 6, 0.6);
    const Mf = fromRows(M, 6);
    const l = new Float64Array(49);
    const piv = new Float64Array(7);
    expect(choleskyOfBlock(Mf, 6, [0, 2, 4], 3, l, 7, piv, 0, tol.rank)).toBe(true);
    const B = [0, 2, 4, 2].map((a) => [0, 2, 4, 2].map((b) => M[a][b]));
    expect(textbookCholeskySolve(B, tol.rank, [1, 1, 1, 1])).toBeNull();
    expect(choleskyOfBlock(Mf, 6, [0, 2, 4, 2], 4, l, 7, piv, 3, tol.rank)).toBe(false);
    // a block whose kept pivot (1) passes at a small diagonal but fails once a row with a diagonal of 1e12 joins
    const D = Float64Array.of(1, 0, 0, 1e12);
    const lD = new Float64Array(9);
    const pD = new Float64Array(3);
    expect(choleskyOfBlock(D, 2, [0], 1, lD, 3, pD, 0, 1e-11)).toBe(true);
    expect(textbookCholeskySolve([[1, 0], [0, 1e12]], 1e-11, [1, 1])).toBeNull();
    expect(choleskyOfBlock(D, 2, [0, 1], 2, lD, 3, pD, 1, 1e-11)).toBe(false);
  });
});
