/** Run the built CLI (dist/src/cli/main.js) as a child process and collect its output. */
import { spawn } from 'node:child_process';
import { join } from 'node:path';

export const builtCli = join(import.meta.dirname, '..', '..', 'dist', 'src', 'cli', 'main.js');

export interface CliRun {
  status: number | null;
  stdout: string;
  stderr: string;
}

export interface CliRunOptions {
  cwd?: string;
  /** run as this user and group (e.g. 65534, nobody: a root process may write anywhere) */
  uid?: number;
  /** kill the child after this many ms, so that a hang fails one case instead of the whole run */
  killAfter?: number;
}

export function runCli(args: string[], opts: CliRunOptions = {}): Promise<CliRun> {
  return new Promise((resolve) => {
    const ids = opts.uid !== undefined ? { uid: opts.uid, gid: opts.uid } : {};
    const child = spawn(process.execPath, [builtCli, ...args], { stdio: ['ignore', 'pipe', 'pipe'], cwd: opts.cwd, ...ids });
    let stdout = '';
    let stderr = '';
    child.stdout.setEncoding('utf8').on('data', (d: string) => (stdout += d));
    child.stderr.setEncoding('utf8').on('data', (d: string) => (stderr += d));
    const timer = opts.killAfter ? setTimeout(() => child.kill('SIGKILL'), opts.killAfter) : null;
    child.on('close', (status) => {
      if (timer) clearTimeout(timer);
      resolve({ status, stdout, stderr });
    });
  });
}
