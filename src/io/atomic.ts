import { writeFileSync, renameSync, unlinkSync, existsSync, mkdirSync } from 'node:fs';
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
    writeFileSync(tmp, data);
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
