/** Search-tree side files on disk (Node only); the pure parse/check is parseTreeJson in index.ts. */
import { readFileSync } from 'node:fs';
import { InputError } from '../io/input-error.js';
import type { TableFile } from '../table/format.js';
import type { SearchTree } from '../partition/tree.js';
import { parseTreeJson } from './index.js';

/** Read a tree side file and check that it was built for this table (hash, region count, nθ). */
export function readTreeFile(path: string, table: TableFile, hash: string): SearchTree {
  let text: string;
  try {
    text = readFileSync(path, 'utf8');
  } catch (e) {
    throw new InputError(path, '', `cannot read the search tree (${(e as Error).message})`);
  }
  return parseTreeJson(text, path, table, hash);
}
