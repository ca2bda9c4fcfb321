/** What every emit target provides: one printer per language/arithmetic, with its own self-test and cost report. */
import type { TableFile } from '../../table/format.js';
import type { SearchTree } from '../../partition/tree.js';
import type { ArrayEvaluation, CostFigures, Locator, SearchKind } from '../arrays.js';
import type { LayoutArray } from '../layout.js';

export interface EmitMeta {
  prefix: string;
  table: TableFile;
  tableHash: string;
  /** regions before merging, when the table was merged first */
  mergedFrom?: number;
  /** lines stating which point-location structure was chosen and why (written into the header) */
  searchReason?: string[];
}

/** One array of a target's memory report: element type in the target's language, count, bytes. */
export interface ArrayBytes {
  name: string;
  type: string;
  count: number;
  bytes: number;
}

export interface TargetCost extends CostFigures {
  /** memory of the arrays, per precision the target reports (the built one always included) */
  bytes: Record<string, { arrays: ArrayBytes[]; total: number }>;
}

/** Target-specific build options (ignored by targets that have no use for them). */
export interface TargetOptions {
  /** fixed point: θ fraction bits per component, forced instead of chosen from the box */
  thetaFrac?: number[];
  /** saturate u to the table's input limits in the generated code (`emit --clamp`; float/double C) */
  clamp?: boolean;
}

export interface TargetFile {
  name: string;
  text: string;
}

/**
 * A code generator for one language and one kind of arithmetic. `B` is the target's build: the
 * numbers it prints, computed once from the table; `evaluate` repeats the generated code's
 * arithmetic exactly, and is what the self-test program is checked against.
 */
export interface EmitTarget<B = unknown> {
  /** registry key, e.g. "c" */
  id: string;
  /** value of --lang that selects it */
  lang: string;
  precisions: readonly string[];
  summary: string;
  /** the point-location structures this target can print (default: tree and sequential) */
  searches?: readonly SearchKind[];
  build(table: TableFile, precision: string, search: SearchKind, tree: Locator | null, options?: TargetOptions): B;
  evaluate(build: B, theta: ArrayLike<number>): ArrayEvaluation;
  layout(build: B): LayoutArray[];
  /** the generated files (e.g. NAME.h and NAME.c) */
  files(build: B, meta: EmitMeta): TargetFile[];
  /** a host program that evaluates the points and compares with `expected` exactly; exits non-zero on a mismatch */
  selfTest(build: B, prefix: string, points: number[][], expected: ArrayEvaluation[]): TargetFile;
  cost(build: B): TargetCost;
  /** a valid name prefix for this language, or why not */
  checkPrefix(prefix: string): string | null;
}
