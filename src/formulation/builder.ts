import type { MpqpProblem } from '../mpqp/types.js';

/**
 * A linear map of v = [z; θ] (one Float64Array of length nz + nθ per row). Every predicted
 * quantity of an MPC formulation (states, inputs, rates, outputs, targets, slacks) is one.
 */
export type VMap = Float64Array[];

/**
 * Accumulates the generic mpQP: the cost as a quadratic form ½ vᵀHv v plus a linear term cᵀz,
 * and constraint rows M v ≤ bound. `finish` splits Hv into H (zz), F (zθ) and Y (θθ), so that
 * J = ½zᵀHz + (Fθ + c)ᵀz + ½θᵀYθ exactly. Rows are stored unscaled (conditioning comes later).
 */
export class QpBuilder {
  readonly nv: number;
  readonly Hv: Float64Array;
  readonly c: Float64Array;
  private readonly G: Float64Array[] = [];
  private readonly E: Float64Array[] = [];
  private readonly w: number[] = [];
  private readonly labels: string[] = [];

  constructor(
    readonly nz: number,
    readonly ntheta: number,
  ) {
    this.nv = nz + ntheta;
    this.Hv = new Float64Array(this.nv * this.nv);
    this.c = new Float64Array(nz);
  }

  zeros(rows: number): VMap {
    return Array.from({ length: rows }, () => new Float64Array(this.nv));
  }

  /** Unit rows picking v entries `offset … offset+count−1`. */
  pick(offset: number, count: number): VMap {
    const M = this.zeros(count);
    for (let i = 0; i < count; i++) M[i][offset + i] = 1;
    return M;
  }

  /** Rows picking θ entries (offset into θ). */
  pickTheta(offset: number, count: number): VMap {
    return this.pick(this.nz + offset, count);
  }

  /** L X for a dense matrix L (rows×X.length). */
  apply(L: number[][], X: VMap): VMap {
    const nv = this.nv;
    return L.map((row) => {
      const out = new Float64Array(nv);
      row.forEach((a, l) => {
        if (a !== 0) for (let j = 0; j < nv; j++) out[j] += a * X[l][j];
      });
      return out;
    });
  }

  /** X + s·Y */
  sum(X: VMap, Y: VMap, s = 1): VMap {
    return X.map((r, i) => r.map((v, j) => v + s * Y[i][j]));
  }

  /** Adds (Mv)ᵀ W (Mv) to the cost, i.e. 2 MᵀWM to Hv. */
  addQuad(M: VMap, W: number[][]): void {
    const nv = this.nv;
    const Hv = this.Hv;
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
  }

  /** Adds l·z_i to the cost. */
  addLinear(zi: number, l: number): void {
    this.c[zi] += l;
  }

  /** The row q ≤ bound with q = row·v, as G z ≤ w + E θ (sign −1: q ≥ bound). */
  addRow(row: Float64Array, sign: 1 | -1, bound: number, label: string): void {
    const { nz, ntheta } = this;
    const g = new Float64Array(nz);
    const e = new Float64Array(ntheta);
    for (let j = 0; j < nz; j++) g[j] = sign * row[j];
    for (let j = 0; j < ntheta; j++) e[j] = -sign * row[nz + j];
    this.G.push(g);
    this.E.push(e);
    this.w.push(sign * bound);
    this.labels.push(label);
  }

  finish(box: { lower: number[]; upper: number[] }, thetaNames: string[], lawSize: number, lawNames: string[]): MpqpProblem {
    const { nz, ntheta: nth, nv, Hv } = this;
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
    const nc = this.w.length;
    const G = new Float64Array(nc * nz);
    const E = new Float64Array(nc * nth);
    this.G.forEach((g, i) => G.set(g, i * nz));
    this.E.forEach((e, i) => E.set(e, i * nth));
    return {
      nz,
      ntheta: nth,
      lawSize,
      nc,
      H,
      F,
      c: Float64Array.from(this.c),
      Y,
      G,
      w: Float64Array.from(this.w),
      E,
      box: { lower: Float64Array.from(box.lower), upper: Float64Array.from(box.upper) },
      labels: [...this.labels],
      mergedFrom: this.labels.map((_, i) => [i]),
      thetaNames: [...thetaNames],
      lawNames: [...lawNames],
    };
  }
}
