/**
 * Table → audit report in one pure call: the embedded build and its certificate, the online QP
 * (quadprog) as the reference, the seven checks of `runAudit`, and the HTML figures (coverage
 * slices, closed-loop time plot). No file I/O: `tessera audit` reads the files, calls these and
 * writes the report atomically.
 */
import { thetaBlock } from '../formulation/layout.js';
import type { MpqpProblem } from '../mpqp/types.js';
import type { LoadedProblem, MpcModel } from '../problem/types.js';
import type { TableFile } from '../table/format.js';
import { problemHash } from '../table/build.js';
import { InputError } from '../io/input-error.js';
import { emit, type SearchChoice } from '../emit/index.js';
import type { EmitArrays, SearchKind } from '../emit/arrays.js';
import { findTarget } from '../emit/targets/index.js';
import { FixedOverflowError, type FixedBuild } from '../emit/fixed.js';
import { makeSliceSpec } from '../partition/slice.js';
import { renderMapSvg } from '../plot/svg.js';
import { renderTimePlotSvg } from '../plot/timeplot.js';
import { runAudit, type AuditReport, type EmbeddedData } from './audit.js';
import { renderAuditHtml, type AuditFigure } from './audit-report.js';
import { certifyFloat } from './certify.js';
import { certifyFixed } from './certify-fixed.js';
import { analyseSlice } from './gaps.js';
import { solveOnlineQp } from './onlineqp.js';
import { limitsOf, plantOf, type RunResult, type SimulationSetup } from './simulate.js';

/**
 * Principal slices of a table as figures: consecutive pairs of θ entries (first three pairs), the
 * other entries at the box centre; feasibility from `mpqp`. SVG strings, new and the caller's.
 */
export function coverageMaps(table: TableFile, mpqp: MpqpProblem): AuditFigure[] {
  const nt = table.dims.ntheta;
  if (nt < 2) return [];
  const pairs: [number, number][] = [];
  for (let i = 0; i + 1 < nt && pairs.length < 3; i += 2) pairs.push([i, i + 1]);
  if (nt % 2 === 1 && pairs.length < 3 && nt > 2) pairs.push([nt - 2, nt - 1]);
  return pairs.map((axes) => {
    const spec = makeSliceSpec(table.box, axes);
    const slice = analyseSlice(table, mpqp, spec);
    const names = table.thetaNames;
    return {
      title: `Slice ${names[axes[0]]} × ${names[axes[1]]}`,
      svg: renderMapSvg(table, slice).svg,
      method: 'exact polygons of every region cut by the plane (half-plane clipping); the feasible part of the plane from support LPs; holes are the feasible part no polygon covers (polygon difference).',
      source: `the table's regions; feasibility from the mpQP of the problem${nt > 2 ? '; other entries fixed at the box centre' : ''}.`,
    };
  });
}

/**
 * Throws InputError (the command line, --search) when the C target of `precision` cannot print the
 * named structure (the fixed-point builds print tree and sequential search only); auto always fits.
 */
export function checkAuditSearch(precision: string, search: SearchChoice): void {
  const supported = findTarget('c', precision)?.searches ?? ['tree', 'sequential'];
  if (search !== 'auto' && !supported.includes(search))
    throw new InputError('(command line)', '--search', `the ${precision} build prints ${supported.join(' or ')} search, not ${search}`);
}

/**
 * The C build of `table` in `precision` ("float", "double", "q15", "q31") with `searchRequested` search (auto: the structure emit's cost model picks), its
 * certificate against the double law (seeded by `seed`; none for double) and its cost. A
 * fixed-point format too narrow for the table cannot be built: the result then says NOT SAFE with
 * the reason instead of throwing.
 */
export function embeddedBuild(table: TableFile, precision: string, searchRequested: SearchChoice, seed: number): EmbeddedData {
  const none = { worstMultiplyAdds: 0, worstComparisons: 0, worstDepth: 0, bytes: 0 };
  checkAuditSearch(precision, searchRequested);
  let search: SearchKind = searchRequested === 'auto' ? 'sequential' : searchRequested;
  try {
    const build = emit<EmitArrays | FixedBuild>(table, { lang: 'c', precision, search: searchRequested, prefix: 'audit_law' });
    search = build.search;
    const cost = { worstMultiplyAdds: build.cost.worstMultiplyAdds, worstComparisons: build.cost.worstComparisons, worstDepth: build.cost.worstDepth, bytes: build.cost.bytes[precision]?.total ?? 0 };
    if (precision === 'double') return { precision, search, searchRequested, certificate: null, cost };
    if (precision === 'float') {
      const c = certifyFloat(table, build.arrays as EmitArrays, { seed });
      return { precision, search, searchRequested, cost, certificate: { safe: c.safe, verdict: c.verdict, maxAbsDiff: c.maxAbsDiff, tolerance: c.tolerance, points: c.points.total, lost: c.lostInFloat, worstTheta: c.worstTheta } };
    }
    const c = certifyFixed(table, build.arrays as FixedBuild, { seed });
    return { precision, search, searchRequested, cost, certificate: { safe: c.safe, verdict: c.verdict, maxAbsDiff: c.maxAbsDiff, tolerance: c.tolerance, points: c.points.total, lost: c.lostInFixed, worstTheta: c.worstTheta } };
  } catch (e) {
    if (!(e instanceof FixedOverflowError)) throw e;
    return { precision, search, searchRequested, cost: none, certificate: { safe: false, verdict: `NOT SAFE: no ${precision} build (${e.message})`, maxAbsDiff: Infinity, tolerance: 0, points: 0, lost: 0, worstTheta: null } };
  }
}

/** Options of `auditTable`. */
export interface AuditTableOptions {
  /** embedded build to certify (default float, and the structure emit's cost model picks) */
  precision?: string;
  search?: SearchChoice;
  /** seeded sample size (agreement; coverage and stability use multiples), seed, closed-loop steps */
  samples?: number;
  seed?: number;
  steps?: number;
  /** true when `problem` was read from a separate file (its hash is then checked against the table's) */
  separateProblem?: boolean;
  /** the tool version recorded in the report */
  toolVersion?: string;
  /** the table's file name in the report and in error messages (default the table's name) */
  tableFile?: string;
  /** name of the separate problem file in error messages */
  problemFile?: string;
  onStage?: (stage: string) => void;
}

/** An audit: the report, and the closed-loop runs it made (for the time plot; not in the report). */
export interface AuditOutcome {
  report: AuditReport;
  closedLoop: { runs: RunResult[]; setup: SimulationSetup } | null;
  model: MpcModel;
  mpqp: MpqpProblem;
}

/**
 * Throws InputError (file `tableFile`) when `table` cannot be audited: a directly given mpQP (no
 * plant) or no region. Cheap; `auditTable` calls it first.
 */
export function checkAuditable(table: TableFile, tableFile: string = table.name): void {
  if (table.layout?.formulation === 'mpqp' || !thetaBlock(table.layout, 'state'))
    throw new InputError(tableFile, 'layout', 'this table holds a directly given mpQP: it has no plant, so invariance and closed-loop runs cannot be audited');
  if (table.regions.length === 0) throw new InputError(tableFile, 'regions', 'the table has no region: nothing to audit');
}

/**
 * Audit an MPC table: its embedded build, then the seven checks of `runAudit` with quadprog's
 * online QP (Goldfarb–Idnani dual method) as the reference law. `problem` is the table's own
 * (`tableProblem(table)`) or a separately read one. Throws InputError for a table of a directly
 * given mpQP (no plant), a table without regions, and a problem without a model.
 */
export function auditTable(table: TableFile, problem: { loaded: LoadedProblem; mpqp: MpqpProblem }, o: AuditTableOptions = {}): AuditOutcome {
  const tableFile = o.tableFile ?? table.name;
  checkAuditable(table, tableFile);
  const { loaded, mpqp } = problem;
  const model = loaded.model;
  if (!model) throw new InputError(o.problemFile ?? tableFile, 'mpqp', 'the problem is a directly given mpQP: it has no plant, so invariance and closed-loop runs cannot be audited');
  const seed = o.seed ?? 1;
  o.onStage?.('embedded build');
  const embedded = embeddedBuild(table, o.precision ?? 'float', o.search ?? 'auto', seed);
  let closedLoop: AuditOutcome['closedLoop'] = null;
  const report = runAudit(
    {
      table,
      model,
      mpqp,
      recomputedHash: problemHash(table.problem),
      problemFileHash: o.separateProblem ? problemHash(loaded.raw) : null,
      toolVersion: o.toolVersion ?? 'unknown',
      online: (th) => {
        const r = solveOnlineQp(mpqp, th);
        return r.feasible ? r.z.slice(0, table.layout.lawSize) : null;
      },
      embedded,
      samples: o.samples,
      seed,
      steps: o.steps,
      onStage: o.onStage,
      onRuns: (runs, setup) => (closedLoop = { runs, setup }),
    },
    tableFile,
  );
  return { report, closedLoop, model, mpqp };
}

/** The audit as one self-contained HTML page, with the coverage slices and the closed-loop time plot. */
export function auditHtml(table: TableFile, outcome: AuditOutcome): string {
  const { model } = outcome;
  const l = outcome.closedLoop;
  const closedLoop: AuditFigure[] = l
    ? [
        {
          title: 'Closed-loop runs',
          svg: closedLoopPlot(table, model, l.setup, l.runs, `${table.name}: closed-loop runs of the audit`),
          method: 'the simulate engine on the nominal model; the table law drives the plant, the online QP (quadprog) is solved beside it (dotted).',
          source: 'the runs of check 7 (first 8 drawn).',
        },
      ]
    : [];
  return renderAuditHtml(outcome.report, { coverage: coverageMaps(table, outcome.mpqp), closedLoop });
}

/** What `closedLoopSetup` needs besides the table and its problem. */
export interface ClosedLoopOptions {
  /** sampling periods per run */
  steps: number;
  /** reference and disturbance schedules (values in output / disturbance units), when the table has those θ blocks */
  reference?: SimulationSetup['reference'];
  disturbance?: SimulationSetup['disturbance'];
  /** measurement noise on the state (one standard deviation per state, seeded) */
  noise?: SimulationSetup['noise'];
  /** saturate the applied input to the table's input limits */
  clamp?: boolean;
  /** a "true" plant different from the nominal model (model mismatch) */
  plant?: SimulationSetup['plant'];
}

/**
 * The closed-loop set-up of an MPC table: the nominal plant of `model`, its hard and soft limits and
 * signal names, and quadprog's online QP beside the table law (for the comparison in every step).
 * Runs are then `simulateRun(setup, i, x0, uPrev)`, summarised by `summarise`.
 */
export function closedLoopSetup(table: TableFile, model: MpcModel, mpqp: MpqpProblem, o: ClosedLoopOptions): SimulationSetup {
  const limits = limitsOf(model);
  return {
    table,
    nominal: plantOf(model as MpcModel & { Bd?: number[][] | null }),
    plant: o.plant,
    limits: limits.hard,
    softLimits: limits.soft,
    names: { states: model.stateNames, inputs: model.inputNames, outputs: model.outputNames },
    online: (th) => {
      const r = solveOnlineQp(mpqp, th);
      return r.feasible ? r.z.slice(0, table.layout.lawSize) : null;
    },
    steps: o.steps,
    reference: o.reference,
    disturbance: o.disturbance,
    noise: o.noise,
    clamp: o.clamp,
  };
}

/** Time plots (SVG string) of closed-loop runs of a table: states, outputs and inputs with their limits. */
export function closedLoopPlot(table: TableFile, model: MpcModel, setup: SimulationSetup, runs: RunResult[], title: string): string {
  return renderTimePlotSvg(runs, {
    title,
    names: setup.names,
    limits: setup.limits,
    softLimits: setup.softLimits,
    tracked: thetaBlock(table.layout, 'reference')?.refersTo ?? [],
    outputsAreStates: !thetaBlock(table.layout, 'disturbance') && model.C.length === model.n && model.C.every((row, i) => row.every((v, j) => v === (i === j ? 1 : 0))),
  });
}
