/**
 * Index files of tables (`tessera-index`, see `indexToBytes` in src/table/boxindex.ts) as the CLI
 * keeps them: the key binding an index to the table file's bytes, the checks of an index path, and
 * the one way an index file of a table is made, shared by `evaluate --index`, `solve --index` and
 * `join --index`, so that every command writes the same bytes for the same table file.
 */
import { closeSync, existsSync, openSync, readFileSync, readSync, statSync } from 'node:fs';
import { createHash } from 'node:crypto';
import { InputError } from '../io/errors.js';
import { checkOutputPath } from '../io/output.js';
import { writeFileAtomic } from '../io/atomic.js';
import { BoxIndex, indexFromBytes, indexToBytes, INDEX_FILE_TAG } from '../table/boxindex.js';
import { tableLocator } from '../table/locator.js';
import { readTableFile } from '../table/file.js';
import type { TableFile } from '../table/format.js';
import { tol } from '../tol.js';

/** Where `evaluate` looks for a table's index when no `--index FILE` is given, and where `solve --index` / `join --index` without a file name write it: `<table path>.index`. */
export function sidecarIndexPath(tablePath: string): string {
  return `${tablePath}.index`;
}

/**
 * An index path given on the command line (`flag`): a file name ending in .index whose directory
 * accepts a new file (checked when the file is not there yet). A file there that is not an index file
 * is refused now, before any work (it is never overwritten); `writer` names who writes index files
 * in the message.
 */
export function checkIndexPath(path: string, flag = '--index', writer = 'tessera'): void {
  if (!path.toLowerCase().endsWith('.index')) throw new InputError(path, flag, `this keeps a ${INDEX_FILE_TAG} file; give a file name ending in .index`);
  if (!existsSync(path)) {
    checkOutputPath(path, flag, { kind: 'file', extensions: ['.index'], what: 'an index file' });
    return;
  }
  if (statSync(path).isDirectory()) throw new InputError(path, flag, 'is a directory; give a file name to write');
  // the tag line only: a file that is not an index file at all is refused, anything else is rewritten
  let head: Buffer;
  try {
    const fd = openSync(path, 'r');
    try {
      head = Buffer.alloc(64);
      head = head.subarray(0, readSync(fd, head, 0, 64, 0));
    } finally {
      closeSync(fd);
    }
  } catch (e) {
    throw new InputError(path, flag, `cannot read the file there (${(e as NodeJS.ErrnoException).code ?? 'error'})`);
  }
  const read = indexFromBytes(head);
  if ('problem' in read && read.problem === 'tag') throw new InputError(path, flag, `not a ${INDEX_FILE_TAG} file (${read.detail}); name a new file or an index file written by ${writer}`);
  checkOutputPath(path, flag, { kind: 'file', extensions: ['.index'], what: 'an index file' });
}

/** "sha256:<hex>" of a file's bytes, read in 16 MiB pieces (a table can be larger than one string). */
export function fileSha256(path: string): string {
  const hash = createHash('sha256');
  const fd = openSync(path, 'r');
  try {
    const buf = Buffer.alloc(16 * 2 ** 20);
    for (let got = readSync(fd, buf, 0, buf.length, null); got > 0; got = readSync(fd, buf, 0, buf.length, null)) hash.update(buf.subarray(0, got));
  } finally {
    closeSync(fd);
  }
  return `sha256:${hash.digest('hex')}`;
}

/** "sha256:<hex>" of bytes in memory. */
export function bytesSha256(bytes: Uint8Array): string {
  return `sha256:${createHash('sha256').update(bytes).digest('hex')}`;
}

/** The key an index file of a table carries: the SHA-256 of the table file's bytes, its region count and nθ, and the locator's parameters. */
export function indexKey(sha: string, regions: number, ntheta: number): Record<string, unknown> {
  return { table: sha, regions, ntheta, locator: 'tableLocator', pad: 1e3 * tol.inside };
}

/** Whether an index read from a file is the index of the table with `key` (same key, same size and nθ). */
export function indexMatches(read: { key: Record<string, unknown>; index: BoxIndex }, key: Record<string, unknown>): boolean {
  return JSON.stringify(read.key) === JSON.stringify(key) && read.index.size === key.regions && read.index.n === key.ntheta;
}

/**
 * The index file of a table, as bytes: `tableLocator` over the table file as read back from
 * `tablePath` (the regions `evaluate` reads, bit for bit), keyed by the SHA-256 of the file's bytes.
 * `table`: the table already read from that file; `boxes`: its regions' bounding boxes computed
 * elsewhere the same way (src/table/shared-boxes.ts).
 */
export function tableIndex(tablePath: string, table?: TableFile, boxes?: Parameters<typeof tableLocator>[3]): { index: BoxIndex; key: Record<string, unknown> } {
  // the hash first when the table is read here: the table read afterwards is then at least as new as
  // the bytes hashed (a table replaced in between gives an index keyed to the old bytes, which no
  // reader takes for the new ones)
  const sha = fileSha256(tablePath);
  const t = table ?? readTableFile(tablePath);
  const key = indexKey(sha, t.regions.length, t.dims.ntheta);
  return { index: tableLocator(t.regions, t.box.lower, t.box.upper, boxes), key };
}

/** Build the index of the table file at `tablePath` and write it to `indexPath` atomically (temp file, then rename); its size in bytes. */
export function writeTableIndex(tablePath: string, indexPath: string): number {
  const { index, key } = tableIndex(tablePath);
  const bytes = indexToBytes(index, key);
  writeFileAtomic(indexPath, bytes);
  return bytes.length;
}

/**
 * The index kept in `indexPath` when it is the index of the table file `tablePath` (already read in
 * full as `table`), else why not (a few words). Reads only; nothing is written.
 */
export function currentIndex(table: TableFile, tablePath: string, indexPath: string, sha?: string, given?: ReturnType<typeof indexFromBytes>): { index: BoxIndex } | { why: string } {
  let read = given;
  if (!read) {
    try {
      read = indexFromBytes(readFileSync(indexPath));
    } catch (e) {
      return { why: `it cannot be read (${(e as NodeJS.ErrnoException).code ?? 'error'})` };
    }
  }
  if ('problem' in read) return { why: read.detail };
  const key = indexKey(sha ?? fileSha256(tablePath), table.regions.length, table.dims.ntheta);
  if (indexMatches(read, key)) return { index: read.index };
  return { why: read.key.table !== key.table ? 'it was the index of another table file' : 'it was built with other locator parameters' };
}

/**
 * After `solve` or `join` wrote the table `tablePath`: its index written to `indexPath` (`--index`),
 * with a progress note on a terminal and, unless quiet, a summary line on stdout. The table is read
 * back from its file, as `evaluate` reads it, so the bytes are those `evaluate --index` writes.
 */
export function writeIndexAfter(tablePath: string, indexPath: string, opts: { quiet?: boolean; live?: boolean }): void {
  const t0 = performance.now();
  if (opts.live) process.stderr.write(`\r\x1b[K  index: building the point-location index of ${tablePath} `);
  const bytes = writeTableIndex(tablePath, indexPath);
  if (opts.live) process.stderr.write('\r\x1b[K');
  if (opts.quiet) return;
  const seconds = (performance.now() - t0) / 1000;
  const use = indexPath === sidecarIndexPath(tablePath) ? `\`tessera evaluate ${tablePath}\` reads it` : `read it with \`tessera evaluate ${tablePath} --index ${indexPath}\``;
  process.stdout.write(`  index: written to ${indexPath} (${(bytes / 2 ** 20).toFixed(1)} MB, ${seconds.toFixed(1)} s); ${use}\n`);
}

/** `--index` of a command that writes the table `out`: the index file's path (FILE, or <out>.index for the flag alone), checked before any work; null without the option. */
export function indexOption(index: string | true | undefined, out: string): string | null {
  if (index === undefined) return null;
  const path = index === true ? sidecarIndexPath(out) : index;
  // a file there that is not an index file is refused now, before any work (never overwritten)
  checkIndexPath(path, '--index');
  return path;
}
