/**
 * Table → everything `tessera emit` writes, in one pure call: optional merging, the point-location
 * structure, the target's files, the certificate, the raw-array exports, the self-test program and
 * the JSON report. No file I/O: the caller writes `files` (names relative to its output directory)
 * and `mergedTableJson` where it wants, atomically. Cross-compiling (`--target-check`) runs tools
 * and stays with the caller, which adds its result to `report.targetCheck`.
 */
import type { TableFile } from '../table/format.js';
import { tableToJson } from '../table/table.js';
import { clampComparisons } from '../table/clamp.js';
import { mergeRegions, type MergeStats } from '../partition/merge.js';
import type { SearchTree, TreeOptions } from '../partition/tree.js';
import { certifyBuild, type CertifiedBuild, type Certificate } from '../check/certify.js';
import { certifyFixed, type FixedCertificate } from '../check/certify-fixed.js';
import { FIXED_LAYOUT_TEXT, type FixedBuild } from './fixed.js';
import type { EmitArrays, SearchKind } from './arrays.js';
import { arraysToCsv, arraysToJson } from './export.js';
import { sampleBox } from './sample.js';
import { findTarget } from './targets/index.js';
import type { TargetFile } from './targets/target.js';
import { fixedPlaneMargin } from './fixed.js';
import { emit, tableHash, treeForTable, type EmitResult, type SearchChoice } from './index.js';

/** What `emitBundle` builds; every field but `lang`, `precision`, `search` and `prefix` is optional. */
export interface EmitBundleOptions {
  /** target language (default "c") and precision ("float", "double", "q15", "q31", … as the target lists) */
  lang?: string;
  precision: string;
  /** point location, or "auto" for the cost model's choice */
  search: SearchChoice;
  /** name prefix of the generated files and functions (checked by the target's prefix rule) */
  prefix: string;
  /** merge regions with the same law whose union is convex before emitting */
  merge?: boolean;
  /** also return the merged table as JSON text (`mergedTableJson`; implies `merge`) */
  mergedTable?: boolean;
  onMergeProgress?: (p: { groupsDone: number; groups: number; tests: number; elapsedSeconds: number }) => void;
  /**
   * a search tree to reuse (search "tree"): called with the table actually emitted (merged or not)
   * and its hash, e.g. to read and check a side file; default: build one
   */
  tree?: (table: TableFile, hash: string) => SearchTree;
  /** split target of the tree's leaves (regions per leaf, default 1) */
  leafSize?: number;
  onTreeProgress?: TreeOptions['onProgress'];
  /** fixed point: fraction bits of each θ entry (default: the most the box allows) */
  thetaFrac?: number[];
  /** saturate u to the table's input limits in the generated code (float/double) */
  clamp?: boolean;
  /** with search "auto": only these structures are candidates (what a cross-check can count) */
  searches?: SearchKind[];
  /** certify the build in its own arithmetic against the double law (seeded; tolerance in u units) */
  certify?: { samples: number; seed: number; tolerance?: number };
  /** also export the raw arrays */
  arrays?: 'json' | 'csv';
  /** also print a self-test program over this many seeded points of the box (seed `seed`) */
  selftest?: number;
  /** seed of the self-test points (default 1) */
  seed?: number;
  /** the table's file name, recorded in the report (default the table's name) */
  tableFile?: string;
}

/** The JSON report of an emit (what `--report` writes); bigints appear as bigints here. */
export type EmitReport = Record<string, unknown> & { targetCheck?: unknown };

/** Everything one emit produces; all new data owned by the caller (`table` may be the input table). */
export interface EmitBundle {
  /** the table emitted: the input, or the merged one */
  table: TableFile;
  /** regions before merging, and the merge counts (null without merging) */
  regionsBefore: number;
  merge: MergeStats | null;
  /** the target's result: arrays, search chosen, candidates, cost report */
  result: EmitResult<unknown>;
  /** every generated file, names relative to the output directory, in writing order */
  files: TargetFile[];
  /** name of the search-tree side file among `files` (null when none is written) */
  treeFile: string | null;
  /** the merged table as table-file JSON (only with `mergedTable`) */
  mergedTableJson: string | null;
  certificate: Certificate | null;
  fixedCertificate: FixedCertificate | null;
  /** the report object (serialise bigints as strings) */
  report: EmitReport;
}

/** The fixed-point scaling of a build, for the JSON report (bigints as decimal strings). */
export function fixedScaling(b: FixedBuild) {
  return {
    format: b.precision,
    thetaFrac: b.thetaFrac,
    thetaAccepted: b.thetaLo.map((l, j) => [String(l), String(b.thetaHi[j])]),
    uFrac: b.uFrac,
    shifts: { tree: b.nodeShift, regions: b.regionShift, laws: b.lawShift, output: b.outShift },
    regionMargin: b.slack,
    lawErrorBound: b.lawErrorBound,
  };
}

/**
 * Emit `table` for one target: merge (optional), choose or build the point location, print the
 * files, certify (optional), export arrays and a self-test (optional), and assemble the report.
 * Throws `FixedOverflowError` when a fixed-point scaling cannot be proven free of overflow, and
 * Error for a target/precision/search the registry does not have. The input table is not changed.
 */
export function emitBundle(input: TableFile, o: EmitBundleOptions): EmitBundle {
  const lang = o.lang ?? 'c';
  const target = findTarget(lang, o.precision);
  if (!target) throw new Error(`no emit target for language "${lang}" and precision "${o.precision}"`);
  let table = input;
  const before = table.regions.length;
  const incomplete = table.stats?.complete === false;
  let merge: MergeStats | null = null;
  if (o.merge || o.mergedTable) {
    const m = mergeRegions(table, o.onMergeProgress);
    table = m.table;
    merge = m.stats;
  }
  const merged = merge !== null;
  const hash = tableHash(table);
  let tree: SearchTree | undefined;
  if (o.search === 'tree')
    tree = o.tree
      ? o.tree(table, hash)
      : treeForTable(table, {
          tableHash: hash,
          leafSize: o.leafSize ?? 1,
          onProgress: o.onTreeProgress,
          // a fixed-point descent rounds θ to its fraction bits: regions within that of a split go to both sides
          // (fixedPlaneMargin); the leaf then takes the best fit by slack-free residuals, so the overlap relocates
          // no point by the region test's slack
          ...(o.precision === 'q15' || o.precision === 'q31' ? { margin: fixedPlaneMargin(table, o.precision, o.thetaFrac), boundaryBothSides: true } : {}),
        });
  const res = emit(table, {
    lang,
    precision: o.precision,
    search: o.search,
    prefix: o.prefix,
    tree,
    mergedFrom: merged ? before : undefined,
    thetaFrac: o.thetaFrac,
    clamp: o.clamp,
    searches: o.searches,
  });
  const fixed = target.id === 'c-fixed';
  const files: TargetFile[] = [...res.files];
  const treeFile = res.tree && res.search === 'tree' && !o.tree ? `${o.prefix}.tree.json` : null;
  if (treeFile) files.push({ name: treeFile, text: JSON.stringify(res.tree) + '\n' });
  let certificate: Certificate | null = null;
  let fixedCertificate: FixedCertificate | null = null;
  if (o.certify && fixed) fixedCertificate = certifyFixed(table, res.arrays as FixedBuild, o.certify);
  // the certificate is of the build that is written, in its own arithmetic (the target's evaluator)
  else if (o.certify) certificate = certifyBuild(table, res.arrays as CertifiedBuild, (th) => target.evaluate(res.arrays, th), o.certify);
  const layout = target.layout(res.arrays);
  if (o.arrays === 'json')
    files.push({
      name: `${o.prefix}_arrays.json`,
      text: arraysToJson(res.arrays as EmitArrays, layout, fixed ? { scaling: fixedScaling(res.arrays as FixedBuild), layout: FIXED_LAYOUT_TEXT } : o.clamp ? { clamp: (res.arrays as EmitArrays).clamp } : {}),
    });
  if (o.arrays === 'csv') for (const [name, text] of arraysToCsv(layout)) files.push({ name: `${o.prefix}_${name}.csv`, text });
  if (o.selftest) {
    const pts = sampleBox(table.box, o.selftest, o.seed ?? 1);
    files.push(target.selfTest(res.arrays, o.prefix, pts, pts.map((p) => target.evaluate(res.arrays, p))));
  }
  const report: EmitReport = {
    table: o.tableFile ?? input.name,
    tableHash: hash,
    complete: !incomplete,
    stopReason: table.stats?.stopReason,
    regions: { before, after: table.regions.length, merged },
    lang,
    target: target.id,
    precision: o.precision,
    search: res.search,
    searchRequested: o.search,
    searchReason: res.searchReason,
    candidates: res.candidates.map((k) => ({
      search: k.search,
      worstMultiplyAdds: k.cost?.worstMultiplyAdds ?? null,
      worstComparisons: k.cost?.worstComparisons ?? null,
      locationBytes: Number.isFinite(k.location) ? k.location : null,
      regionBytes: k.regions,
      floatSafe: k.floatSafe,
      rejected: k.rejected,
      buildSeconds: k.buildSeconds,
      meanOperations: k.meanOps,
      latencyWeightedOperations: k.meanLatency,
    })),
    slack: (res.arrays as { slack: number }).slack,
    tree: res.locator ? res.locator.stats : null,
    clamp: o.clamp ? { limits: table.inputLimits, comparisons: clampComparisons(table.inputLimits, table.dims.nu) } : null,
    cost: res.cost,
    certificate: certificate ?? fixedCertificate,
    targetCheck: undefined,
    overflow: fixed ? (res.arrays as FixedBuild).proof : undefined,
    scaling: fixed ? fixedScaling(res.arrays as FixedBuild) : undefined,
  };
  return { table, regionsBefore: before, merge, result: res, files, treeFile, mergedTableJson: o.mergedTable ? tableToJson(table) : null, certificate, fixedCertificate, report };
}
