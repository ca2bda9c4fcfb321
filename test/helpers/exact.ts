/**
 * Exact arithmetic references for the accuracy tests: a double converted to a big number exactly
 * (its IEEE 754 binary64 bits, m·2^e; mathjs's bignumber(x) would take the shortest decimal instead),
 * and the KKT solution of an equality-constrained QP in 50 digits (mathjs BigNumber lusolve).
 */
import * as math from 'mathjs';
import type { MpqpProblem } from '../../src/index.js';

/** mathjs with 50-digit BigNumbers (carries a condition number of 1e19 with 30 digits to spare) */
export const bn = math.create(math.all, { number: 'BigNumber', precision: 50 });

/** A double as m·2^e exactly (m a BigInt), from its bits (IEEE 754 binary64; common practice). */
export function exactBits(x: number): { m: bigint; e: number } {
  if (x === 0) return { m: 0n, e: 0 };
  const dv = new DataView(new ArrayBuffer(8));
  dv.setFloat64(0, x);
  const hi = dv.getUint32(0);
  const lo = dv.getUint32(4);
  const sign = hi >>> 31 ? -1n : 1n;
  const ex = (hi >>> 20) & 0x7ff;
  let m = (BigInt(hi & 0xfffff) << 32n) | BigInt(lo);
  if (ex) m |= 1n << 52n;
  return { m: sign * m, e: (ex || 1) - 1075 };
}

/** A double as a BigNumber of `big` (default: 50 digits), exactly. */
export function exactBig(x: number, big: math.MathJsInstance = bn): math.BigNumber {
  const { m, e } = exactBits(x);
  return big.multiply(big.bignumber(m.toString()), big.pow(big.bignumber(2), e)) as math.BigNumber;
}

/**
 * z of the equality-constrained QP on active set A at θ in 50 digits, rounded to double: mathjs
 * BigNumber lusolve on the KKT system [H G_Aᵀ; G_A 0][z; λ] = [−(Fθ + c); w_A + E_Aθ] (common
 * practice), from the problem's doubles exactly.
 */
export function exactKkt(p: MpqpProblem, A: number[], theta: number[]): number[] {
  const { nz, ntheta: nt } = p;
  const n = nz + A.length;
  const K = bn.zeros(n, n) as math.Matrix;
  const rhs: math.BigNumber[] = [];
  const b = (x: number): math.BigNumber => exactBig(x);
  for (let i = 0; i < nz; i++) {
    for (let j = 0; j < nz; j++) K.set([i, j], b(p.H[i * nz + j]));
    A.forEach((a, q) => {
      K.set([i, nz + q], b(p.G[a * nz + i]));
      K.set([nz + q, i], b(p.G[a * nz + i]));
    });
    let s = b(p.c[i]);
    for (let j = 0; j < nt; j++) s = bn.add(s, bn.multiply(b(p.F[i * nt + j]), b(theta[j]))) as math.BigNumber;
    rhs.push(bn.unaryMinus(s) as math.BigNumber);
  }
  for (const a of A) {
    let s = b(p.w[a]);
    for (let j = 0; j < nt; j++) s = bn.add(s, bn.multiply(b(p.E[a * nt + j]), b(theta[j]))) as math.BigNumber;
    rhs.push(s);
  }
  const x = bn.lusolve(K, rhs) as math.Matrix;
  return Array.from({ length: nz }, (_, i) => Number(x.get([i, 0])));
}
