/**
 * The parameter (θ) and decision (z) layout of an mpQP, as a formulation describes it.
 *
 * Every downstream consumer (evaluate, gaps, map, view, emit's C header, simulate, audit) reads the
 * layout recorded in the table and never re-derives it from the problem file. The order of θ is
 * fixed by the problem-format contract: [x(0); u_prev; r; d], each block present only when used;
 * a directly given mpQP has one block of kind 'parameter'.
 */
export type ThetaBlockKind = 'state' | 'inputPrev' | 'reference' | 'disturbance' | 'parameter';

/** A contiguous block of θ. */
export interface ThetaBlock {
  kind: ThetaBlockKind;
  /** first index of the block in θ */
  offset: number;
  /** number of entries */
  size: number;
  /** one name per entry (the θ names of the table, sliced) */
  names: string[];
  /**
   * what each entry refers to: for 'state' the state index, for 'inputPrev' the input index, for
   * 'reference' the tracked output index (0-based into the plant outputs), for 'disturbance' the
   * disturbance index, for 'parameter' the θ index
   */
  refersTo: number[];
}

export type ZBlockKind = 'moves' | 'stateSlack' | 'outputSlack' | 'decision';

/** A contiguous block of the decision vector z. */
export interface ZBlock {
  kind: ZBlockKind;
  offset: number;
  size: number;
  names: string[];
  /** for 'moves': the index within the move block (move k = floor(i / lawSize), input i mod lawSize); for slacks: the state/output index; for 'decision': the z index */
  refersTo: number[];
}

/** Which formulation produced the mpQP. */
export type FormulationKind = 'regulation' | 'tracking' | 'mpqp';

export interface Layout {
  formulation: FormulationKind;
  /** features on top of the formulation, in a fixed order: 'inputRate', 'disturbance', 'softState', 'softOutput', 'terminalSet' */
  features: string[];
  theta: ThetaBlock[];
  z: ZBlock[];
  /** the law stored per region is z[0 .. lawSize): u(0) (m entries) for MPC, the first k entries of z for an mpQP */
  lawSize: number;
  /** names of the law's entries (input names, or z1… for an mpQP) */
  lawNames: string[];
  /** with the 'terminalSet' feature: rows of the terminal invariant set and its Gilbert–Tan determination index */
  terminalSet?: { rows: number; index: number };
}

/** The block of the given kind, or undefined when the layout has none. */
export function thetaBlock(layout: Layout, kind: ThetaBlockKind): ThetaBlock | undefined {
  return layout.theta.find((b) => b.kind === kind);
}

/** All θ names in order. */
export function thetaNamesOf(layout: Layout): string[] {
  return layout.theta.flatMap((b) => b.names);
}

/** The layout of a plain parameter vector θ (names given) with a law of `lawNames.length` entries first in z (z names: `zNames`, else the law names then z<i>). */
export function plainLayout(thetaNames: string[], lawNames: string[], nz: number = lawNames.length, zNames?: string[]): Layout {
  const range = (k: number) => Array.from({ length: k }, (_, i) => i);
  return {
    formulation: 'mpqp',
    features: [],
    theta: [{ kind: 'parameter', offset: 0, size: thetaNames.length, names: [...thetaNames], refersTo: range(thetaNames.length) }],
    z: [{ kind: 'decision', offset: 0, size: nz, names: range(nz).map((i) => zNames?.[i] ?? lawNames[i] ?? `z${i + 1}`), refersTo: range(nz) }],
    lawSize: lawNames.length,
    lawNames: [...lawNames],
  };
}
