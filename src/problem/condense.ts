import type { MpqpProblem } from '../mpqp/types.js';
import type { Bounds, MpcModel } from './types.js';

/**
 * Condensed mpQP of the MPC problem. Every predicted quantity is a linear map of v = [z; θ]
 * (rows of length nz + nθ), so the cost is J = Σ (Mv)ᵀ W (Mv) = ½ vᵀ Hv v with Hv = 2 Σ MᵀWM,
 * and H, F, Y are the zz, zθ, θθ blocks of Hv: J = ½ zᵀHz + zᵀFθ + ½ θᵀYθ exactly.
 *
 * Constraint rows (unscaled, mergedFrom[i] = [i]), in this order, upper row before lower row:
 *   input      u_i(k),  k = 0…N−1   label `u1(0) <= 1`, `u1(0) >= -1`
 *   inputRate  Δu_i(k), k = 0…N−1   label `du1(3) <= 0.5` (`d` + input name)
 *   state      x_i(k),  k = 1…N     label `x2(4) <= 2`
 *   output     y_i(k),  k = 1…N     label `y1(2) >= -5`
 * within each kind ordered by k, then component i. A `null` bound gives no row.
 */
export function buildRawMpqp(model: MpcModel): MpqpProblem {
  const { n, m, N, Nu, A, B, C } = model;
  const nz = Nu * m;
  const nth = n + (model.hasRate ? m : 0);
  const nv = nz + nth;

  const zeroRows = (r: number) => Array.from({ length: r }, () => new Float64Array(nv));
  const inputMap = (k: number) => {
    const blk = Math.min(k, Nu - 1);
    const U = zeroRows(m);
    for (let i = 0; i < m; i++) U[i][blk * m + i] = 1;
    return U;
  };
  const uPrev = zeroRows(m);
  if (model.hasRate) for (let i = 0; i < m; i++) uPrev[i][nz + n + i] = 1;
  const apply = (M: number[][], X: Float64Array[]) =>
    M.map((row) => {
      const out = new Float64Array(nv);
      row.forEach((a, l) => {
        if (a !== 0) for (let j = 0; j < nv; j++) out[j] += a * X[l][j];
      });
      return out;
    });
  const sum = (X: Float64Array[], Y: Float64Array[], s = 1) => X.map((r, i) => r.map((v, j) => v + s * Y[i][j]));

  // x(k), u(k), Δu(k) as maps of v
  const xs: Float64Array[][] = [];
  let x = zeroRows(n);
  for (let i = 0; i < n; i++) x[i][nz + i] = 1;
  xs.push(x);
  const us: Float64Array[][] = [];
  const dus: Float64Array[][] = [];
  for (let k = 0; k < N; k++) {
    const u = inputMap(k);
    us.push(u);
    dus.push(sum(u, k === 0 ? uPrev : us[k - 1], -1));
    x = sum(apply(A, x), apply(B, u));
    xs.push(x);
  }

  // Hv = 2 Σ MᵀWM
  const Hv = new Float64Array(nv * nv);
  const addQuad = (M: Float64Array[], W: number[][]) => {
    const r = M.length;
    for (let a = 0; a < r; a++)
      for (let b = 0; b < r; b++) {
        const wab = 2 * W[a][b];
        if (wab === 0) continue;
        const Ma = M[a];
        const Mb = M[b];
        for (let i = 0; i < nv; i++) {
          const s = wab * Ma[i];
          if (s === 0) continue;
          for (let j = 0; j < nv; j++) Hv[i * nv + j] += s * Mb[j];
        }
      }
  };
  for (let k = 0; k < N; k++) {
    addQuad(xs[k], model.Q);
    addQuad(us[k], model.R);
    if (model.S) addQuad(dus[k], model.S);
  }
  addQuad(xs[N], model.P);

  const H = new Float64Array(nz * nz);
  const F = new Float64Array(nz * nth);
  const Y = new Float64Array(nth * nth);
  for (let i = 0; i < nv; i++)
    for (let j = i; j < nv; j++) {
      const v = 0.5 * (Hv[i * nv + j] + Hv[j * nv + i]);
      if (i < nz && j < nz) H[i * nz + j] = H[j * nz + i] = v;
      else if (i < nz) F[i * nth + (j - nz)] = v;
      else Y[(i - nz) * nth + (j - nz)] = Y[(j - nz) * nth + (i - nz)] = v;
    }

  // constraint rows: q = Mz z + Mθ θ ≤ ub → Mz z ≤ ub − Mθ θ;  q ≥ lb → −Mz z ≤ −lb + Mθ θ
  const Grows: Float64Array[] = [];
  const Erows: Float64Array[] = [];
  const w: number[] = [];
  const labels: string[] = [];
  const emit = (M: Float64Array[], b: Bounds | undefined, names: string[], k: number) => {
    if (!b) return;
    M.forEach((row, i) => {
      for (const [bound, sign, op] of [
        [b.upper[i], 1, '<='],
        [b.lower[i], -1, '>='],
      ] as const) {
        if (bound === null) continue;
        const g = new Float64Array(nz);
        const e = new Float64Array(nth);
        for (let j = 0; j < nz; j++) g[j] = sign * row[j];
        for (let j = 0; j < nth; j++) e[j] = -sign * row[nz + j];
        Grows.push(g);
        Erows.push(e);
        w.push(sign * bound);
        labels.push(`${names[i]}(${k}) ${op} ${bound}`);
      }
    });
  };
  const cs = model.constraints;
  const rateNames = model.inputNames.map((s) => `d${s}`);
  for (let k = 0; k < N; k++) emit(us[k], cs.input, model.inputNames, k);
  for (let k = 0; k < N; k++) emit(dus[k], cs.inputRate, rateNames, k);
  for (let k = 1; k <= N; k++) emit(xs[k], cs.state, model.stateNames, k);
  for (let k = 1; k <= N; k++) emit(apply(C, xs[k]), cs.output, model.outputNames, k);

  const nc = w.length;
  const G = new Float64Array(nc * nz);
  const E = new Float64Array(nc * nth);
  Grows.forEach((g, i) => G.set(g, i * nz));
  Erows.forEach((e, i) => E.set(e, i * nth));
  return {
    nz,
    ntheta: nth,
    nu: m,
    nc,
    H,
    F,
    Y,
    G,
    w: Float64Array.from(w),
    E,
    box: { lower: Float64Array.from(model.box.lower), upper: Float64Array.from(model.box.upper) },
    labels,
    mergedFrom: labels.map((_, i) => [i]),
    thetaNames: [...model.thetaNames],
    inputNames: [...model.inputNames],
  };
}
