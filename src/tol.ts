/**
 * Every numerical tolerance of the engine, named once. Values are absolute on data that the
 * problem builder has scaled (constraint rows normalised to unit length), so they read as
 * distances in θ-space or as residuals of unit-norm rows.
 */
export const tol = {
  /** symmetric-matrix tests: |M - Mᵀ| ≤ symmetry·(1 + max|M|) */
  symmetry: 1e-9,
  /** PSD test: smallest eigenvalue ≥ −psd·(1 + max|M|); PD test: Cholesky pivot > pd·(1 + max|M|) */
  psd: 1e-9,
  pd: 1e-12,
  /** primal feasibility of a constraint row (unit-norm rows): G z − w − Eθ ≤ primal */
  primal: 1e-9,
  /** a Lagrange multiplier below this counts as zero (weakly active) */
  dual: 1e-9,
  /** rank decisions in KKT / Schur-complement factorisations (relative pivot) */
  rank: 1e-10,
  /** a critical region whose Chebyshev radius is at most this is lower-dimensional and discarded */
  radius: 1e-7,
  /** step across a facet, as a multiple of the region scale, to land in the neighbour */
  facetStep: 1e-6,
  /** a half-space row is redundant when the LP maximum exceeds its bound by at most this */
  redundancy: 1e-9,
  /** a point θ is inside a region when every row satisfies A θ ≤ b + inside */
  inside: 1e-8,
  /** Riccati / Lyapunov residual accepted after solving (relative to ‖P‖) */
  riccatiResidual: 1e-9,
  /** spectral radius must be below 1 − stability for A − BK to count as stable */
  stability: 1e-9,
  /** LP kernel pivot tolerance */
  lpPivot: 1e-11,
} as const;

export type Tolerances = typeof tol;
