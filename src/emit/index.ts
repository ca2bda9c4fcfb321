/**
 * Library entry of the code generator: table (+ optional search tree) → C files, arrays, cost figures.
 * The search tree is returned to the caller (and written by the CLI as the side file
 * DIR/NAME.tree.json); `locateTree` in src/partition/tree.ts evaluates it from TypeScript.
 */
import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import { InputError } from '../io/errors.js';
import { tableToJson } from '../table/table.js';
import type { TableFile } from '../table/format.js';
import { buildSearchTree, TREE_FORMAT, TREE_VERSION, type SearchTree, type TreeOptions } from '../partition/tree.js';
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
  /** saturate u to the table's input limits in the generated code (`emit --clamp`) */
  clamp?: boolean;
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
  const arrays = buildArrays(table, opts.precision, opts.search, tree, opts.clamp);
  const meta = { prefix: opts.prefix, table, tableHash: hash, mergedFrom: opts.mergedFrom };
  return { header: emitHeader(arrays, meta), source: emitSource(arrays, meta), arrays, tree, cost: costFigures(arrays), hash };
}

/** Read a tree side file and check that it was built for this table. */
export function readTreeFile(path: string, table: TableFile, hash: string): SearchTree {
  let raw: unknown;
  try {
    raw = JSON.parse(readFileSync(path, 'utf8'));
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

