import { writeFileSync, renameSync, unlinkSync, existsSync, mkdirSync, openSync, writeSync, closeSync, readdirSync } from 'node:fs';
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
  sweepStaleTemps(dir, basename(path));
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

/** A temp file's age (ms) past which a dead writer's leftover is removed. */
export const STALE_TEMP_MS = 60_000;

/**
 * Remove the temp files an earlier write of the same target left behind when its process was
 * killed mid-write (SIGKILL, or Ctrl-C during a synchronous write: Node's default SIGINT action
 * runs no JavaScript, so the 'exit' clean-up above never ran). A temp file is removed only when
 * its name is this module's pattern for `base`, the process id in it is not running on this
 * machine (signal 0 answers ESRCH) and it was last modified more than `STALE_TEMP_MS` ago, so a
 * live writer's file (here or, on a shared file system, from another machine that happens to
 * reuse a pid) is left alone unless it stopped writing a minute ago. Best effort: a failure to
 * list or remove is ignored, the write goes on.
 */
export function sweepStaleTemps(dir: string, base: string, now = Date.now()): string[] {
  const removed: string[] = [];
  let names: string[];
  try {
    names = readdirSync(dir);
  } catch {
    return removed;
  }
  const prefix = `.${base}.`;
  for (const name of names) {
    if (!name.startsWith(prefix) || !name.endsWith('.tmp')) continue;
    const m = /^(\d+)\.(\d+)\.tmp$/.exec(name.slice(prefix.length));
    if (!m) continue;
    const pid = Number(m[1]);
    if (pid === process.pid || processAlive(pid)) continue;
    const full = join(dir, name);
    try {
      if (now - statSync(full).mtimeMs <= STALE_TEMP_MS) continue;
      unlinkSync(full);
      removed.push(name);
    } catch {
      /* gone already, or not ours to remove */
    }
  }
  return removed;
}

function processAlive(pid: number): boolean {
  if (!Number.isSafeInteger(pid) || pid <= 0) return false;
  try {
    process.kill(pid, 0);
    return true;
  } catch (e) {
    // EPERM: the process exists but belongs to someone else
    return (e as NodeJS.ErrnoException).code !== 'ESRCH';
  }
}
