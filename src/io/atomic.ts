import { writeFileSync, renameSync, unlinkSync, existsSync, mkdirSync, openSync, writeSync, closeSync } from 'node:fs';
import { dirname, basename, join } from 'node:path';
import { statSync } from 'node:fs';
import { InputError } from './errors.js';
import { refusePseudoFs } from './output.js';

const pending = new Set<string>();
let hooked = false;

/** Remove temp files of writes still in flight when the process is interrupted. */
function hookSignals(): void {
  if (hooked) return;
  hooked = true;
  const cleanup = () => {
    for (const p of pending) {
      try {
        unlinkSync(p);
      } catch {
        /* already gone */
      }
    }
    pending.clear();
  };
  process.on('exit', cleanup);
}

/**
 * Write a file so that readers see either the old content or the whole new content, never a
 * half-written file: write a temp file beside the target, then rename it over the target.
 */
export function writeFileAtomic(path: string, data: string | Uint8Array): void {
  writeAtomically(path, (tmp) => writeFileSync(tmp, data));
}

/**
 * `writeFileAtomic` for text given in pieces (e.g. one line per region): the pieces are written
 * in batches of about `batchChars` characters, so the whole text is never one string.
 */
export function writeFileAtomicChunks(path: string, chunks: Iterable<string>, batchChars = 1 << 22): void {
  writeAtomically(path, (tmp) => {
    const fd = openSync(tmp, 'w');
    try {
      let pending = '';
      for (const c of chunks) {
        pending += c;
        if (pending.length >= batchChars) {
          writeAll(fd, pending);
          pending = '';
        }
      }
      if (pending) writeAll(fd, pending);
    } finally {
      closeSync(fd);
    }
  });
}

function writeAll(fd: number, text: string): void {
  const buf = Buffer.from(text, 'utf8');
  for (let off = 0; off < buf.length; ) off += writeSync(fd, buf, off, buf.length - off);
}

function writeAtomically(path: string, write: (tmp: string) => void): void {
  hookSignals();
  refusePseudoFs(path, '');
  let isDir = false;
  try {
    isDir = statSync(path).isDirectory();
  } catch {
    /* does not exist yet: fine */
  }
  if (isDir) throw new InputError(path, '', 'is a directory; give a file name to write');
  const dir = dirname(path);
  if (!existsSync(dir)) mkdirSync(dir, { recursive: true });
  const tmp = join(dir, `.${basename(path)}.${process.pid}.${Date.now()}.tmp`);
  pending.add(tmp);
  try {
    write(tmp);
    renameSync(tmp, path);
  } finally {
    pending.delete(tmp);
    if (existsSync(tmp)) {
      try {
        unlinkSync(tmp);
      } catch {
        /* ignore */
      }
    }
  }
}
