import { closeSync, openSync, realpathSync, statSync, unlinkSync } from 'node:fs';
import { dirname, extname, resolve, sep } from 'node:path';
import { InputError } from './errors.js';

/** Kernel pseudo file systems: writing there hangs (a recursive mkdir under /proc spins) or fails late. */
const PSEUDO_FS = ['/proc', '/sys'];

export function pseudoFsRoot(absPath: string): string | null {
  for (const root of PSEUDO_FS) if (absPath === root || absPath.startsWith(root + sep)) return root;
  return null;
}

/** Refuse a path under /proc or /sys (as given, or once symlinks of its existing part are resolved). */
export function refusePseudoFs(path: string, flag: string, existing?: string): void {
  const abs = resolve(path);
  let root = pseudoFsRoot(abs);
  if (!root && existing) {
    try {
      root = pseudoFsRoot(realpathSync(existing));
    } catch {
      /* vanished meanwhile: the write will report it */
    }
  }
  if (root) throw new InputError(path, flag, `${root} is a kernel pseudo file system, not a place for output files; give a path on a disk`);
}

/** One-line reason for a failed write probe in `dir`. */
export function writeProbeReason(code: string | undefined, dir: string): string {
  if (code === 'EROFS') return `${dir} is on a read-only file system`;
  if (code === 'EACCES' || code === 'EPERM') return `no permission to write in ${dir}`;
  if (code === 'ENOSPC' || code === 'EDQUOT') return `no space left in ${dir}`;
  return `cannot write in ${dir} (${code ?? 'error'})`;
}

function probeWritable(dir: string, path: string, flag: string): void {
  const probe = `${dir}${dir.endsWith(sep) ? '' : sep}.tessera-probe-${process.pid}-${Date.now()}`;
  try {
    closeSync(openSync(probe, 'wx'));
  } catch (e) {
    throw new InputError(path, flag, writeProbeReason((e as NodeJS.ErrnoException).code, dir));
  }
  try {
    unlinkSync(probe);
  } catch {
    /* best effort */
  }
}

function statOrNull(p: string): ReturnType<typeof statSync> | null {
  try {
    return statSync(p);
  } catch {
    return null;
  }
}

export interface OutputPathOptions {
  /** what will be written there: one file, or a directory of files */
  kind: 'file' | 'directory';
  /** accepted extensions for a file (lower case, with the dot), e.g. ['.svg'] */
  extensions?: string[];
  /** what is written, for the extension message, e.g. "SVG" */
  what?: string;
}

/**
 * Check an output path before any computation, so that a bad path fails at once with one line
 * naming it (never after a long solve): not under /proc or /sys, the extension matches what is
 * written, no parent is a file, the target is not a directory (or is one, for `kind: 'directory'`),
 * and the nearest existing directory accepts a new file (a probe file is created and removed:
 * this catches permissions, read-only file systems and full disks alike).
 * Returns the directory that the write will create (as the user wrote it), or null.
 */
export function checkOutputPath(path: string, flag: string, opts: OutputPathOptions): string | null {
  refusePseudoFs(path, flag);
  if (opts.kind === 'file' && opts.extensions) {
    const ext = extname(path).toLowerCase();
    if (!opts.extensions.includes(ext))
      throw new InputError(path, flag, `this writes ${opts.what ?? 'a file'}; give a file name ending in ${opts.extensions.join(' or ')}${ext ? ` (not ${ext})` : ''}`);
  }
  const abs = resolve(path);
  // the nearest existing ancestor (or the target itself)
  let p = abs;
  let st = statOrNull(p);
  while (!st) {
    const up = dirname(p);
    if (up === p) break;
    p = up;
    st = statOrNull(p);
  }
  refusePseudoFs(path, flag, p);
  if (!st) throw new InputError(path, flag, 'no existing directory on this path');
  if (p === abs) {
    if (opts.kind === 'file' && st.isDirectory()) throw new InputError(path, flag, 'is a directory; give a file name to write');
    if (opts.kind === 'directory' && !st.isDirectory()) throw new InputError(path, flag, 'exists and is not a directory');
    probeWritable(opts.kind === 'file' ? dirname(abs) : abs, path, flag);
    return null;
  }
  if (!st.isDirectory()) throw new InputError(path, flag, `${p} is not a directory`);
  probeWritable(p, path, flag);
  const created = opts.kind === 'file' ? dirname(path) : path;
  return resolve(created) === p ? null : created;
}
