import type { Bounds, MpcModel } from './types.js';

/** Size of the condensed mpQP of a model, known before building it. */
export interface CondensedSize {
  /** decision variables: Nu·m */
  nz: number;
  /** parameters: n (+ m with input rates) */
  ntheta: number;
  /** constraint rows before merging: N·(finite input, rate, state and output limits) + terminal-set rows */
  rows: number;
  /** bytes of the dense arrays set-up holds at its peak (condensing, conditioning, QP workspace) */
  bytes: number;
}

const finite = (b: Bounds | undefined): number => (b ? b.lower.filter((v) => v !== null).length + b.upper.filter((v) => v !== null).length : 0);

/**
 * Count, from the model's dimensions alone, what condensing would build: every predicted x(k),
 * u(k), Δu(k) as a row over v = [z; θ] ((N+1)·n + 2·N·m rows of nz + nθ doubles), the constraint
 * rows twice (as built and as conditioned), H and the full Hessian over v, and the QP workspace
 * (H⁻¹, Gᵀ, K = H⁻¹Gᵀ, M = G H⁻¹ Gᵀ, H⁻¹F, G H⁻¹ F, S). M (rows²) dominates for long horizons.
 */
export function estimateCondensedSize(model: MpcModel): CondensedSize {
  const { n, m, N, Nu } = model;
  const nz = Nu * m;
  const ntheta = n + (model.hasRate ? m : 0);
  const nv = nz + ntheta;
  const c = model.constraints;
  // terminal-set rows (x(N) ∈ {H x ≤ h}) are known from the model too; slack rows are not counted
  const rows = N * (finite(c.input) + finite(c.inputRate) + finite(c.state) + finite(c.output)) + (model.terminalSet?.h.length ?? 0);
  const doubles =
    ((N + 1) * n + 2 * N * m) * nv + // predictions
    2 * rows * (nv + 1) + // constraint rows built, then conditioned
    nv * nv + 2 * nz * nz + // Hessian over v, H and H⁻¹
    rows * rows + // M
    3 * rows * nz + // G, Gᵀ, K
    3 * rows * ntheta + 2 * nz * ntheta; // E, G H⁻¹ F, S, F, H⁻¹F
  return { nz, ntheta, rows, bytes: 8 * doubles };
}

export function formatBytes(b: number): string {
  if (b >= 2 ** 30) return `${(b / 2 ** 30).toFixed(1)} GiB`;
  if (b >= 2 ** 20) return `${(b / 2 ** 20).toFixed(1)} MiB`;
  return `${(b / 2 ** 10).toFixed(1)} KiB`;
}
