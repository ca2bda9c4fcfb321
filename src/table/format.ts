import type { CriticalRegion, PartitionStats } from '../mpqp/types.js';

/**
 * What a table says about its exploration: only what is the same however it was run (one thread or
 * many, in parts, resumed). Work counters (LPs, QPs, candidates) depend on that and are printed instead.
 * `unresolvedPieces`: the facets the exploration gave a piece up on that the final regions, re-checked,
 * leave uncovered (`recheckGiveUps`, src/mpqp/canonical.ts); 0 in a sound table. Until s24 it counted
 * the pieces given up, which depended on the run; readers' rule is unchanged (0 sound, > 0 run
 * `gaps`), so the version was not bumped.
 */
export type TableStats = Pick<PartitionStats, 'regions' | 'complete' | 'stopReason' | 'unresolvedPieces'>;
import type { Layout } from '../formulation/layout.js';

/** Tag and version of the table file; bump the version on any change of meaning. */
export const TABLE_FORMAT = 'tessera-table';
/**
 * 3: the `lean` key (regions without `moves`/`value` when true) and one region per line.
 * Version 2 files (always full, any JSON layout) are still read.
 */
export const TABLE_VERSION = 3;
/** Versions this build reads. */
export const TABLE_VERSIONS_READ: readonly number[] = [2, 3];

/**
 * The table file: deterministic JSON (same problem → byte-identical file, whatever the thread count,
 * parts or resumptions: regions in canonical order, see src/mpqp/canonical.ts). Run-dependent
 * figures (seconds, host, work counters) are never stored here; they go to the printed summary.
 */
export interface TableFile {
  format: typeof TABLE_FORMAT;
  version: number;
  /**
   * true: every region keeps the law of u(0) (z[0..lawSize)), its half-spaces, active set and
   * neighbours, but not the whole move sequence (`moves`) nor the value function (`value`).
   * Commands that need those refuse a lean table or say what they leave out. Read as false from a
   * version 2 file.
   */
  lean: boolean;
  /** problem name from the problem file (or the file's base name) */
  name: string;
  /** the problem as read (parsed JSON/YAML object, echoed verbatim) */
  problem: unknown;
  /** "sha256:<hex>" of the canonical JSON of `problem` */
  problemHash: string;
  /** θ and z blocks as the formulation describes them; downstream code reads θ's layout from here */
  layout: Layout;
  thetaNames: string[];
  /** names of the law's entries (= layout.lawNames): the inputs of u(0), or z1… of an mpQP */
  inputNames: string[];
  /** parameter box the partition covers */
  box: { lower: number[]; upper: number[] };
  /** nominal input limits (null = unbounded; all null for an mpQP), for generated code and plots */
  inputLimits: { lower: (number | null)[]; upper: (number | null)[] };
  /** meaning of each mpQP constraint row that an active set refers to */
  constraints: string[];
  /** the mpQP dimensions; nu = layout.lawSize, the entries of the law */
  dims: { ntheta: number; nu: number; nz: number; nc: number };
  tolerances: Record<string, number>;
  regions: CriticalRegion[];
  stats: TableStats;
}
