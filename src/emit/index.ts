/**
 * Library entry of the code generator: table (+ optional search tree) → C files, arrays, cost figures.
 * The search tree is returned to the caller (and written by the CLI as the side file
 * DIR/NAME.tree.json); `locateTree` in src/partition/tree.ts evaluates it from TypeScript.
 */
import { createHash } from 'node:crypto';
import { tableToJson } from '../table/table.js';
import type { TableFile } from '../table/format.js';
import { buildSearchTree, type SearchTree, type TreeOptions } from '../partition/tree.js';
import { buildArrays, costFigures, type CostFigures, type EmitArrays, type Precision, type SearchKind } from './arrays.js';
import { emitHeader, emitSource } from './c.js';

export type { Precision, SearchKind } from './arrays.js';

/** "sha256:<hex>" of the table file's canonical JSON. */
export function tableHash(table: TableFile): string {
  return 'sha256:' + createHash('sha256').update(tableToJson(table)).digest('hex');
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

export function treeForTable(table: TableFile, options: TreeOptions = {}): SearchTree {
  return buildSearchTree(table.regions, table.dims.ntheta, { ...options, tableHash: options.tableHash ?? tableHash(table) });
}

export function emitC(table: TableFile, opts: EmitOptions): EmitResult {
  const hash = tableHash(table);
  const tree = opts.search === 'tree' ? (opts.tree ?? treeForTable(table, { ...opts.treeOptions, tableHash: hash })) : null;
  const arrays = buildArrays(table, opts.precision, opts.search, tree);
  const meta = { prefix: opts.prefix, table, tableHash: hash, mergedFrom: opts.mergedFrom };
  return { header: emitHeader(arrays, meta), source: emitSource(arrays, meta), arrays, tree, cost: costFigures(arrays), hash };
}
