/**
 * tessera's pure core: everything that needs no file system, process or network. It imports no
 * `node:*` module (test/api/core-purity.test.ts walks its import graph), so bundlers and browsers
 * can use it; the viewer (`tessera view`) is a bundle of this module. Node users import `tessera`
 * (src/index.ts), which adds file I/O on top.
 *
 * Conventions of the whole API:
 * - θ (the parameter vector: state, previous input, …, in the table's `thetaNames` order) and u(0)
 *   (in `inputNames` order) are in the problem file's own units; nothing is scaled behind your back.
 * - Nested `number[][]` matrices are row-major (rows first); typed-array matrices of the mpQP are
 *   dense row-major `Float64Array`s.
 * - Functions never keep or mutate the arrays you pass in; what they return is new and yours, except
 *   where a doc comment says an object shares parts of an input (e.g. a table shares regions with
 *   the partition it was built from).
 * - Errors a user can cause (bad problem text, bad table) are `InputError`s naming file, key and reason.
 */

// errors and tolerances
export { InputError } from './io/input-error.js';
export { tol, type Tolerances } from './tol.js';

// problems: parse and validate problem documents, build the mpQP
export { parseProblem, parseProblemText } from './problem/read.js';
export type { Bounds, LoadedProblem, MpcModel, TerminalKind, SoftLimits, TerminalSet } from './problem/types.js';
export { formulate, buildMpqp, type Formulation } from './formulation/index.js';
export type { MpqpProblem, CriticalRegion, AffineMap, QuadraticForm, FacetInfo, SolveOptions, Progress, PartitionStats, Partition, ExplorationState, ExplorationWork, ExplorationListener } from './mpqp/types.js';

// solving
export { solveProblem, formulateFeasible, setupSize, tableProblem, type SolvedProblem, type SetupSize, type TableProblem, type TableProblemOptions } from './table/solve.js';
export { solvePartition } from './mpqp/solve.js';
export { joinPartitions, canonicalNeighbours, compareActiveSets, subBox } from './mpqp/canonical.js';
export { makePart, parsePartJson, joinParts, makeCheckpoint, parseCheckpointJson, parsePartIndex, PART_FORMAT, CHECKPOINT_FORMAT, RUN_STATE_VERSION, type PartFile, type CheckpointFile, type PartIndex, type SubBoxProgress } from './table/part.js';
export { makeTable, problemHash } from './table/build.js';

// tables: parse, validate, serialise
export { TABLE_FORMAT, TABLE_VERSION, type TableFile, type TableStats } from './table/format.js';
export { parseTableJson, checkTable, tableToJson } from './table/table.js';
export type { Layout, ThetaBlock, ThetaBlockKind, ZBlock, ZBlockKind, FormulationKind } from './formulation/layout.js';

// evaluation
export { evaluateTable, locateSequential, regionContains, applyAffine, type Evaluation } from './table/table.js';
export { evaluatePoints, evaluationCsv, parsePointsCsv, type PointEvaluation } from './table/points.js';

// coverage and gaps
export { analyseCoverage, analyseSlice, feasibleAt, feasibleSlice } from './check/gaps.js';
export type { AnalysedSlice, CoverageOptions, CoverageReport, Fraction, HoleWitness } from './check/gaps.js';

// slices and polygons
export { makeSliceSpec, liftPoint, sliceRegion, sliceRegions, sliceGaps, type SliceSpec, type SlicePolygon, type SliceGaps } from './partition/slice.js';
export { area, centroid, ccw, convexContains, type Point, type Polygon } from './partition/polygon.js';

// maps (SVG strings), heat layers, closed-loop trajectories
export { drawMap, type MapRequest, type DrawnMap } from './plot/map.js';
export { renderMapSvg, describeRegion, formatAffine, activeSetText, lawText, sliceColours, heatGrid, heatInterpolator } from './plot/svg.js';
export type { ColourBy, HeatLayer, HeatGrid, MapOptions, MapResult, Trajectory } from './plot/svg.js';
export { heatLayer, quadraticAt, isMergedTable, LEAN_NO_COST } from './plot/heat.js';
export { colourByKey, lawKey, paletteColour, REGION_PALETTE, HOLE_FILL, HOLE_STROKE, INFEASIBLE_FILL, INFEASIBLE_HATCH } from './plot/colour.js';
export { simulateClosedLoop, parseInitialStates, type PlantModel } from './plot/trajectory.js';

// emit: search tree, arrays, C, certificate, merging
export { emit, emitC, treeForTable, tableHash, parseTreeJson, type EmitOptions, type EmitResult } from './emit/index.js';
export { emitBundle, fixedScaling, type EmitBundle, type EmitBundleOptions, type EmitReport } from './emit/bundle.js';
export { TARGETS, targetLanguages, targetPrecisions, findTarget } from './emit/targets/index.js';
export type { EmitTarget, TargetCost, TargetFile } from './emit/targets/target.js';
export { layoutOf, type LayoutArray, type ElementKind } from './emit/layout.js';
export { buildArrays, evaluateArrays, costFigures, type EmitArrays, type ArrayEvaluation, type CostFigures, type Precision, type SearchKind } from './emit/arrays.js';
export { emitSelfTest, checkPrefix } from './emit/targets/c.js';
export { arraysToJson, arraysToCsv } from './emit/export.js';
export { sampleBox } from './emit/sample.js';
export { certifyFloat, type Certificate, type CertifyOptions } from './check/certify.js';
export { buildFixed, evaluateFixed, quantizeTheta, overflowProof, FixedOverflowError, FIXED_FORMATS, type FixedBuild, type FixedFormat, type FixedOptions, type FixedEvaluation, type OverflowProof } from './emit/fixed.js';
export { certifyFixed, type FixedCertificate } from './check/certify-fixed.js';
export { mergeRegions, type MergeStats } from './partition/merge.js';
export { buildSearchTree, locateTree, type SearchTree, type TreeOptions, type TreeStats } from './partition/tree.js';

// closed-loop simulation and the online-QP reference
export {
  simulateRun,
  simulateFromTheta,
  summarise,
  nominalFailure,
  simulationCsv,
  plantOf,
  sampleCoveredStarts,
  splitTheta,
  stepPlant,
  outputOf,
  LIMIT_MARGIN,
} from './check/simulate.js';
export type { PlantDynamics, Limits, SignalNames, Schedule, OnlineLaw, SimulationSetup, StepRecord, Violation, RunResult, SimulationSummary } from './check/simulate.js';
export { solveOnlineQp } from './check/onlineqp.js';
export { renderTimePlotSvg, type TimePlotOptions } from './plot/timeplot.js';

// audit: identity, agreement, coverage, recursive feasibility, stability evidence, embedded build, closed loop
export { runAudit, auditChecks } from './check/audit.js';
export type { AuditReport, AuditInputs, CheckResult, Verdict, IdentityData, AgreementData, StabilityData, EmbeddedData, ClosedLoopData } from './check/audit.js';
export { renderAuditHtml, renderAuditMarkdown, SAFETY_CAUTION, type AuditFigure } from './check/audit-report.js';
export { checkInvariance, type InvarianceReport, type BoundaryFacet, type AffineSuccessor, type LeavingRegion } from './check/invariance.js';
export { auditTable, auditHtml, checkAuditable, coverageMaps, embeddedBuild, closedLoopSetup, closedLoopPlot, type AuditOutcome, type AuditTableOptions, type ClosedLoopOptions } from './check/audit-table.js';
