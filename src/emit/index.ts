/**
 * Library entry of the code generator: table (+ optional search tree) → the target's files, its
 * build (the arrays), cost figures. Targets live in ./targets (one printer per language/arithmetic).
 * The search tree is returned to the caller (and written by the CLI as the side file
 * DIR/NAME.tree.json); `locateTree` in src/partition/tree.ts evaluates it from TypeScript.
 */
import { InputError } from '../io/input-error.js';
import { sha256Hex } from '../util/sha256.js';
import { tableToJson } from '../table/table.js';
import type { TableFile } from '../table/format.js';
import { buildSearchTree, TREE_FORMAT, TREE_VERSION, type SearchTree, type TreeOptions } from '../partition/tree.js';
import type { EmitArrays, Precision, SearchKind } from './arrays.js';
import { findTarget, targetLanguages, targetPrecisions } from './targets/index.js';
import type { EmitTarget, TargetCost, TargetFile } from './targets/target.js';

export type { Precision, SearchKind } from './arrays.js';

/** "sha256:<hex>" of the table file's canonical JSON. */
export function tableHash(table: TableFile): string {
  return 'sha256:' + sha256Hex(tableToJson(table));
}

export interface EmitOptions<P extends string = Precision> {
  /** target language (default "c") */
  lang?: string;
  precision: P;
  search: SearchKind;
  prefix: string;
  /** reuse a tree built before (must match the table) */
  tree?: SearchTree;
  treeOptions?: TreeOptions;
  /** region count before a merge, noted in the header */
  mergedFrom?: number;
  /** fixed point: θ fraction bits per component instead of the ones chosen from the box */
  thetaFrac?: number[];
  /** saturate u to the table's input limits in the generated code (`emit --clamp`) */
  clamp?: boolean;
}

export interface EmitResult<B = EmitArrays> {
  target: EmitTarget<B>;
  /** the generated files, in the order written */
  files: TargetFile[];
  /** C targets: the header and source text (also in `files`) */
  header: string;
  source: string;
  /** the target's build: the numbers its code holds */
  arrays: B;
  tree: SearchTree | null;
  cost: TargetCost;
  hash: string;
}

/**
 * Build the binary search tree over the table's regions (hyperplanes from region facets, leaves
 * listing candidate regions), stamped with the table hash so a side file cannot be reused on
 * another table. New data, owned by the caller.
 */
export function treeForTable(table: TableFile, options: TreeOptions = {}): SearchTree {
  return buildSearchTree(table.regions, table.dims.ntheta, { ...options, tableHash: options.tableHash ?? tableHash(table) });
}

/** Generate code for any registered target (language `opts.lang`, default c, and `opts.precision`). */
export function emit<B = unknown>(table: TableFile, opts: EmitOptions<string>): EmitResult<B> {
  const lang = opts.lang ?? 'c';
  const target = findTarget(lang, opts.precision) as EmitTarget<B> | null;
  if (!target) {
    if (!targetLanguages().includes(lang)) throw new Error(`no emit target for language "${lang}" (targets: ${targetLanguages().join(', ')})`);
    throw new Error(`language "${lang}" has no precision "${opts.precision}" (${targetPrecisions(lang).join(', ')})`);
  }
  const hash = tableHash(table);
  const tree = opts.search === 'tree' ? (opts.tree ?? treeForTable(table, { ...opts.treeOptions, tableHash: hash })) : null;
  const arrays = target.build(table, opts.precision, opts.search, tree, { thetaFrac: opts.thetaFrac, clamp: opts.clamp });
  const meta = { prefix: opts.prefix, table, tableHash: hash, mergedFrom: opts.mergedFrom };
  const files = target.files(arrays, meta);
  const text = (ext: string) => files.find((f) => f.name === `${opts.prefix}${ext}`)?.text ?? '';
  return { target, files, header: text('.h'), source: text('.c'), arrays, tree, cost: target.cost(arrays), hash };
}

/**
 * C99 in float or double (the `c` target): header and source that evaluate the table law
 * u(0) = Fθ + g (−1 / no output outside every region), with the flat arrays, the tree used and the
 * cost figures (bytes, worst-case multiply-adds and comparisons). All new and owned by the caller.
 */
export function emitC(table: TableFile, opts: EmitOptions): EmitResult<EmitArrays> {
  return emit<EmitArrays>(table, { ...opts, lang: 'c' });
}

/** Parse a tree side file's text and check that it was built for this table (`path` names it in errors). */
export function parseTreeJson(text: string, path: string, table: TableFile, hash: string): SearchTree {
  let raw: unknown;
  try {
    raw = JSON.parse(text);
  } catch (e) {
    throw new InputError(path, '', `cannot read the search tree (${(e as Error).message})`);
  }
  const t = raw as SearchTree;
  if (!t || t.format !== TREE_FORMAT) throw new InputError(path, 'format', `expected "${TREE_FORMAT}"`);
  if (t.version !== TREE_VERSION) throw new InputError(path, 'version', `unsupported version ${JSON.stringify(t.version)}`);
  if (t.tableHash !== hash) throw new InputError(path, 'tableHash', `built for table ${t.tableHash}, not for this table (${hash})`);
  if (t.regionCount !== table.regions.length || t.ntheta !== table.dims.ntheta) throw new InputError(path, 'regionCount', 'does not match the table');
  return t;
}

