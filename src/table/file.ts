/** Table files on disk (Node only): the pure parse/validate/serialise lives in table.ts. */
import { readTextInput } from '../io/errors.js';
import { writeFileAtomic } from '../io/atomic.js';
import { parseTableJson, tableToJson } from './table.js';
import type { TableFile } from './format.js';

/** Write `table` to `path` atomically (temp file, then rename) as `tableToJson` text. */
export function writeTableFile(path: string, table: TableFile): void {
  writeFileAtomic(path, tableToJson(table));
}

/** Read and check a table file; every failure is an InputError naming the file and key. */
export function readTableFile(path: string): TableFile {
  return parseTableJson(readTextInput(path, 'table file'), path);
}
