/**
 * Library entry of the code generator: table (+ optional search tree) → C files, arrays, cost figures.
 * The search tree is returned to the caller (and written by the CLI as the side file
 * DIR/NAME.tree.json); `locateTree` in src/partition/tree.ts evaluates it from TypeScript.
 */
import { InputError } from '../io/input-error.js';
import { sha256Hex } from '../util/sha256.js';
import { tableToJson } from '../table/table.js';
import type { TableFile } from '../table/format.js';
import { buildSearchTree, TREE_FORMAT, TREE_VERSION, type SearchTree, type TreeOptions } from '../partition/tree.js';
import { buildArrays, costFigures, type CostFigures, type EmitArrays, type Precision, type SearchKind } from './arrays.js';
import { emitHeader, emitSource } from './c.js';

export type { Precision, SearchKind } from './arrays.js';

/** "sha256:<hex>" of the table file's canonical JSON. */
export function tableHash(table: TableFile): string {
  return 'sha256:' + sha256Hex(tableToJson(table));
}

export interface EmitOptions {
  precision: Precision;
  search: SearchKind;
  prefix: string;
  /** reuse a tree built before (must match the table) */
  tree?: SearchTree;
  treeOptions?: TreeOptions;
  /** region count before a merge, noted in the header */
  mergedFrom?: number;
}

export interface EmitResult {
  header: string;
  source: string;
  arrays: EmitArrays;
  tree: SearchTree | null;
  cost: CostFigures;
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

/**
 * Generate the C99 header and source that evaluate the table law u(0) = Fθ + g (−1 / no output
 * outside every region), with the flat arrays, the tree used and the cost figures (bytes,
 * worst-case multiply-adds and comparisons). Strings and arrays are new and owned by the caller.
 */
export function emitC(table: TableFile, opts: EmitOptions): EmitResult {
  const hash = tableHash(table);
  const tree = opts.search === 'tree' ? (opts.tree ?? treeForTable(table, { ...opts.treeOptions, tableHash: hash })) : null;
  const arrays = buildArrays(table, opts.precision, opts.search, tree);
  const meta = { prefix: opts.prefix, table, tableHash: hash, mergedFrom: opts.mergedFrom };
  return { header: emitHeader(arrays, meta), source: emitSource(arrays, meta), arrays, tree, cost: costFigures(arrays), hash };
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

