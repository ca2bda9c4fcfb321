/** quadprog 1.6 (Goldfarb–Idnani dual method): 1-based arrays; minimises ½bᵀDb − dᵀb s.t. Aᵀb ≥ b0, first meq rows equalities. */
declare module 'quadprog' {
  export interface QuadprogResult {
    solution: number[];
    value: number[];
    message: string;
  }
  export function solveQP(Dmat: number[][], dvec: number[], Amat: number[][], bvec: number[], meq?: number): QuadprogResult;
  const quadprog: { solveQP: typeof solveQP };
  export default quadprog;
}
