import { describe, it, expect } from 'vitest';
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { existsSync, mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { root } from '../helpers/solved.js';

// Ctrl-C during `tessera solve` must leave neither a table nor a temp file (writes are temp + rename),
// say what was stopped, end the progress line with a newline and exit 130 (128 + SIGINT, common practice).
const cli = join(root, 'dist', 'src', 'cli', 'main.js');

/**
 * The 4-D two-cart fixture with a longer horizon. `long`: N = 20, 16 moves, still running after 150 s
 * on 2 threads (measured 2026-12-05), so an interrupt at a fixed time always lands mid-run. Otherwise
 * N = 12, 8 moves: done in about 6 s on 2 threads (≈ 9 300 regions), for the test that needs the
 * exploration to end. (The N = 12 problem used to take over 20 s; once the solver got faster it ended
 * before the 6 s interrupt and the first test saw exit 0 with a table written.)
 */
function longProblem(dir: string, long = true): string {
  const p = JSON.parse(readFileSync(join(root, 'test', 'fixtures', 'problems', 'two-carts-4d.json'), 'utf8'));
  p.horizon = long ? 20 : 12;
  p.controlHorizon = long ? 16 : 8;
  const file = join(dir, 'long.json');
  writeFileSync(file, JSON.stringify(p));
  return file;
}

interface Ended {
  code: number | null;
  stdout: string;
  stderr: string;
}

/** Attach every listener before anything can happen, then resolve when the child has closed. */
function watch(child: ChildProcess): Promise<Ended> {
  let stdout = '';
  let stderr = '';
  child.stdout?.setEncoding('utf8').on('data', (d: string) => (stdout += d));
  child.stderr?.setEncoding('utf8').on('data', (d: string) => (stderr += d));
  return new Promise((r) => child.on('close', (code, sig) => r({ code: code ?? (sig === 'SIGINT' ? 130 : null), stdout, stderr })));
}

describe('interrupting tessera solve', () => {
  it('SIGINT mid-run: exit 130, a message naming what was stopped, no table and no temp file', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'tessera-int-'));
    const problem = longProblem(dir);
    const out = join(dir, 'out', 'table.json');
    const child = spawn(process.execPath, [cli, 'solve', problem, '-o', out]);
    const ended = watch(child);
    // long enough for start-up on a loaded machine (the solve itself runs for well over 150 s)
    await new Promise((r) => setTimeout(r, 6000));
    const stillRunning = child.exitCode === null;
    child.kill('SIGINT');
    const e = await ended;
    expect(stillRunning, 'the solve was still running when interrupted').toBe(true);
    expect(e.code).toBe(130);
    expect(e.stdout).not.toContain('table written');
    expect(e.stderr).toMatch(new RegExp(`^tessera: interrupted: the solve of ${problem.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')} was stopped after \\d+ regions \\(\\d+\\.\\d s\\); no table was written to ${out.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}\\n$`));
    expect(existsSync(out)).toBe(false);
    expect(readdirSync(dir)).toEqual(['long.json']);
    rmSync(dir, { recursive: true, force: true });
  }, 60000);

  // a terminal is needed for the progress line: `script` (util-linux) runs the CLI on a pseudo-terminal,
  // and Ctrl-C typed into it (byte 0x03) reaches the CLI as SIGINT through the terminal driver
  const hasScript = spawnSync('script', ['--version'], { encoding: 'utf8' }).status === 0;
  it('Ctrl-C on a terminal: the progress line ends with a newline before the message', async () => {
    expect(hasScript, 'util-linux `script` is needed for this test').toBe(true);
    const dir = mkdtempSync(join(tmpdir(), 'tessera-int-tty-'));
    const problem = longProblem(dir);
    const out = join(dir, 'table.json');
    const child = spawn('script', ['-qec', `${process.execPath} ${cli} solve ${problem} -o ${out}`, '/dev/null'], { stdio: ['pipe', 'pipe', 'pipe'] });
    const ended = watch(child);
    // wait for the first progress line, then type Ctrl-C
    await new Promise<void>((r) => {
      const t = setInterval(() => {
        if (child.exitCode !== null) return r(clearInterval(t));
      }, 100);
      child.stdout!.on('data', (d: string) => {
        if (String(d).includes('regions')) {
          clearInterval(t);
          r();
        }
      });
    });
    child.stdin!.write('\x03');
    const e = await ended;
    const text = e.stdout; // the pseudo-terminal merges stderr into script's stdout
    expect(text).toMatch(/candidates \d+ {2}regions \d+ {2}LPs \d+ {2}\d+\.\d s \r?\n(\r?\n)?tessera: interrupted: the solve of .* was stopped after \d+ regions/);
    expect(existsSync(out)).toBe(false);
    rmSync(dir, { recursive: true, force: true });
  }, 60000);

  // the canonical form runs on the main thread without yielding: a Ctrl-C there used to meet no
  // handler at all (Node's default: killed by the signal, nothing said); now it is seen when the step
  // ends, and the command stops before writing, with the same message, exit 130 and the checkpoint
  it('Ctrl-C during the canonical form: exit 130, the message and a checkpoint, no table', async () => {
    expect(hasScript, 'util-linux `script` is needed for this test').toBe(true);
    const dir = mkdtempSync(join(tmpdir(), 'tessera-int-canon-'));
    const problem = longProblem(dir, false);
    const out = join(dir, 'table.json');
    const cp = join(dir, 'cp.json');
    const child = spawn('script', ['-qec', `${process.execPath} ${cli} solve ${problem} -o ${out} --threads 1 --checkpoint ${cp}`, '/dev/null'], { stdio: ['pipe', 'pipe', 'pipe'] });
    const ended = watch(child);
    let sent = false;
    // the progress line names the canonical form's steps once the exploration is over
    child.stdout!.on('data', (d: string) => {
      if (!sent && String(d).includes('canonical form:')) {
        sent = true;
        child.stdin!.write('\x03');
      }
    });
    const e = await ended;
    expect(sent, 'the canonical form was reached and Ctrl-C typed during it').toBe(true);
    expect(e.code).toBe(130);
    const text = e.stdout;
    expect(text).toMatch(/tessera: interrupted: the solve of .* was stopped after \d+ regions \(\d+\.\d s\); no table was written to /);
    expect(text).toContain(`continue with: tessera solve ${problem} --resume ${cp} -o ${out}`);
    expect(text).not.toContain('table written');
    expect(existsSync(out)).toBe(false);
    // only the problem and the checkpoint: no temp file left behind
    expect(readdirSync(dir).sort()).toEqual(['cp.json', 'long.json']);
    rmSync(dir, { recursive: true, force: true });
  }, 90000);
});
