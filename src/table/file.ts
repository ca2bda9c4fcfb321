/** Table files on disk (Node only): the pure parse/validate/serialise lives in table.ts. */
import { closeSync, openSync, readSync, statSync } from 'node:fs';
import { readTextInput } from '../io/errors.js';
import { InputError } from '../io/input-error.js';
import { writeFileAtomicChunks } from '../io/atomic.js';
import { checkTable, parseTableJson, tableChunks } from './table.js';
import type { TableFile } from './format.js';
import type { CriticalRegion } from '../mpqp/types.js';

/**
 * Write `table` to `path` atomically (temp file, then rename) as `tableToJson` text, streamed one
 * region line at a time: no string ever holds the whole file.
 */
export function writeTableFile(path: string, table: TableFile): void {
  writeFileAtomicChunks(path, tableChunks(table));
}

/** How `readTableFile` reads (defaults suit any table; tests make them small to exercise streaming). */
export interface ReadTableOptions {
  /** files larger than this many bytes are read line by line instead of as one string (default 32 MiB) */
  streamAbove?: number;
  /** bytes read from the file at a time when streaming (default 16 MiB) */
  chunkBytes?: number;
}

/**
 * Read and check a table file; every failure is an InputError naming the file and key. A large
 * file is read in chunks and parsed one region line at a time (the layout `tableChunks` writes),
 * so neither the file nor any string of it has to fit V8's maximum string length.
 */
export function readTableFile(path: string, options: ReadTableOptions = {}): TableFile {
  let size = -1;
  try {
    size = statSync(path).size;
  } catch {
    /* readTextInput reports it */
  }
  if (size < 0 || size <= (options.streamAbove ?? 32 * 2 ** 20)) return parseTableJson(readTextInput(path, 'table file'), path);
  return readTableStreaming(path, options.chunkBytes ?? 16 * 2 ** 20);
}

const REGIONS_OPEN = ' "regions": [';

function readTableStreaming(path: string, chunkBytes: number): TableFile {
  let fd: number;
  try {
    fd = openSync(path, 'r');
  } catch (e) {
    throw new InputError(path, '', `cannot read table file (${(e as NodeJS.ErrnoException).code ?? 'error'})`);
  }
  let phase = 'head' as 'head' | 'regions' | 'tail';
  const head: string[] = [];
  let headChars = 0;
  const tail: string[] = [];
  const regions: CriticalRegion[] = [];
  const onLine = (line: string): void => {
    if (phase === 'head') {
      head.push(line);
      headChars += line.length;
      if (line === REGIONS_OPEN) phase = 'regions';
      else if (headChars > 256 * 2 ** 20)
        throw new InputError(path, '', 'too large to read as one string and not written one region per line (table version 3 layout); write it again with this version');
      return;
    }
    if (phase === 'regions') {
      if (line === ' ]' || line === ' ],') {
        phase = 'tail';
        tail.push(line.slice(2));
        return;
      }
      const text = line.endsWith(',') ? line.slice(0, -1) : line;
      try {
        regions.push(JSON.parse(text) as CriticalRegion);
      } catch (e) {
        throw new InputError(path, `regions[${regions.length}]`, `not valid JSON (${(e as Error).message})`);
      }
      return;
    }
    tail.push(line);
  };
  try {
    let buf = Buffer.alloc(chunkBytes);
    let held = 0; // bytes of an unfinished line at the start of buf
    for (;;) {
      if (held === buf.length) {
        // one line longer than the buffer: grow it
        const g = Buffer.alloc(buf.length * 2);
        buf.copy(g, 0, 0, held);
        buf = g;
      }
      const got = readSync(fd, buf, held, buf.length - held, null);
      const end = held + got;
      let start = 0;
      for (let nl = buf.indexOf(10, 0); nl >= 0 && nl < end; nl = buf.indexOf(10, start)) {
        onLine(buf.toString('utf8', start, nl));
        start = nl + 1;
      }
      if (got === 0) {
        if (start < end) onLine(buf.toString('utf8', start, end));
        break;
      }
      buf.copy(buf, 0, start, end);
      held = end - start;
    }
  } finally {
    closeSync(fd);
  }
  if (phase !== 'tail') throw new InputError(path, 'regions', phase === 'head' ? 'no "regions" line found (not a version 3 table layout)' : 'the regions list is not closed (file cut short?)');
  let raw: Record<string, unknown>;
  try {
    raw = JSON.parse(head.join('\n') + ']' + tail.join('\n')) as Record<string, unknown>;
  } catch (e) {
    throw new InputError(path, '', `not valid JSON (${(e as Error).message})`);
  }
  raw.regions = regions;
  return checkTable(raw, path);
}
