/**
 * Problem → table, and table → the mpQP behind it: the two steps every command and library user
 * repeats. Pure (no file I/O): the caller reads files and prints progress.
 */
import { formulate, type Formulation } from '../formulation/index.js';
import type { Layout } from '../formulation/layout.js';
import { infeasibleCore } from '../mpqp/infeasible.js';
import { mergedRowLabel } from '../mpqp/labels.js';
import { solvePartition } from '../mpqp/solve.js';
import { canonicalReserve, joinPartitions } from '../mpqp/canonical.js';
import { estimateCondensedSize, formatBytes, type CondensedSize } from '../problem/size.js';
import type { MpqpProblem, Partition, SolveOptions } from '../mpqp/types.js';
import { parseProblem } from '../problem/read.js';
import type { LoadedProblem } from '../problem/types.js';
import { InputError } from '../io/input-error.js';
import { makeTable, problemHash } from './build.js';
import type { TableFile } from './format.js';

/** Everything one solve produces. The caller owns all of it; nothing is shared with later calls. */
export interface SolvedProblem {
  /** the problem as read and validated */
  loaded: LoadedProblem;
  /** its condensed, conditioned mpQP (dense row-major Float64Arrays, see MpqpProblem) */
  mpqp: MpqpProblem;
  /** the θ/z layout of the formulation (also recorded in the table) */
  layout: Layout;
  /** the critical regions (canonical order, `joinPartitions`) and exploration statistics */
  partition: Partition;
  /** the table file object (`tableToJson` serialises it; it shares `regions` with `partition`) */
  table: TableFile;
  /** wall-clock seconds of the exploration (run-dependent, never stored in the table) */
  seconds: number;
}

/** What setting up a problem will cost, known from its dimensions before anything is built. */
export interface SetupSize extends CondensedSize {
  /** "n_z = 8, 120 constraint rows, about 1.2 MiB to set up" */
  text: string;
}

/**
 * The size of the condensed mpQP of an MPC problem, estimated from its dimensions alone (bytes =
 * the peak of the dense set-up arrays). Null for a problem given directly as an mpQP (already
 * built: nothing to estimate). Cheap; call it before `formulateFeasible` to refuse huge problems.
 */
export function setupSize(loaded: LoadedProblem): SetupSize | null {
  if (!loaded.model) return null;
  const size = estimateCondensedSize(loaded.model);
  return { ...size, text: `n_z = ${size.nz}, ${size.rows} constraint rows, about ${formatBytes(size.bytes)} to set up` };
}

/**
 * Formulate the conditioned mpQP of `loaded` and check that its feasible set is not empty. When no
 * θ in the parameter box admits inputs that meet the limits, throws an InputError (file `file`,
 * default the problem's name; key "constraints") that names a smallest set of conflicting limits
 * (deletion filter over the rows, one LP each). The returned mpQP and layout are new and the caller's.
 */
export function formulateFeasible(loaded: LoadedProblem, file: string = loaded.name): Formulation {
  const formulation = formulate(loaded);
  const { mpqp } = formulation;
  const core = infeasibleCore(mpqp);
  if (core) {
    const limits = core.rows.map((i) => mpqp.labels[i]);
    throw new InputError(
      file,
      'constraints',
      `the feasible set is empty: no θ in the parameter box admits inputs that meet the limits; these limits conflict${core.needsBox ? ' within the box' : ''}: ${mergedRowLabel(limits)}`,
    );
  }
  return formulation;
}

/**
 * Solve a validated problem (an MPC model or a directly given mpQP): formulate the mpQP, check its
 * feasible set is not empty (`formulateFeasible`), explore its critical regions, assemble the table.
 * θ, u and the box are in the problem's own units. Bounded runs (`maxRegions`, `timeLimit`,
 * `shouldStop`) return a table with `stats.complete = false`, never a silently shortened one.
 */
export function solveProblem(loaded: LoadedProblem, options: SolveOptions = {}): SolvedProblem {
  const formulation = formulateFeasible(loaded);
  const { mpqp, layout } = formulation;
  const t0 = performance.now();
  // canonical form: regions sorted by active set, neighbours from the regions alone (same bytes however explored)
  // the time limit and `shouldStop` bound the canonical form too: the exploration leaves it its reserve
  const stopAt = options.timeLimit === undefined ? Infinity : t0 + 1000 * options.timeLimit;
  const explored = solvePartition(mpqp, options.timeLimit === undefined ? options : { ...options, timeLimit: options.timeLimit * (1 - canonicalReserve) });
  const partition = joinPartitions(mpqp, [explored], { shouldStop: () => performance.now() >= stopAt || (options.shouldStop?.() ?? false) });
  const seconds = (performance.now() - t0) / 1000;
  return { loaded, mpqp, layout, partition, table: makeTable(loaded, formulation, partition, { lean: options.lean }), seconds };
}

/** The problem behind a table, with its mpQP (what feasibility, gaps, maps and trajectories need). */
export interface TableProblem {
  loaded: LoadedProblem;
  mpqp: MpqpProblem;
  /** false when a separately given problem is not the one the table was built from (hash differs) */
  sameProblem: boolean;
}

/** Where the problem behind a table comes from; the names only label error messages. */
export interface TableProblemOptions {
  /** name of the table (a path) in messages; default "table" */
  tableFile?: string;
  /** a problem read separately (e.g. a revised problem file); default: the table's own echo */
  problem?: LoadedProblem;
  /** name of that problem's file in messages */
  problemFile?: string;
}

/**
 * The mpQP that decides feasibility for `table`: `options.problem` when given, else the table's own
 * echo of the problem it was built from. Throws InputError when the parameter counts differ.
 */
export function tableProblem(table: TableFile, options: TableProblemOptions = {}): TableProblem {
  const tableFile = options.tableFile ?? 'table';
  const loaded = options.problem ?? parseProblem(table.problem, `${tableFile} (key problem)`);
  const { mpqp } = formulate(loaded);
  const sameProblem = !options.problem || !table.problemHash || problemHash(loaded.raw) === table.problemHash;
  if (mpqp.ntheta !== table.dims.ntheta)
    throw new InputError(options.problem ? (options.problemFile ?? loaded.name) : tableFile, 'parameters', `problem has ${mpqp.ntheta} parameters, the table ${table.dims.ntheta}`);
  return { loaded, mpqp, sameProblem };
}
