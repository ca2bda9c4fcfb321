import { describe, it, expect } from 'vitest';
import { spawn } from 'node:child_process';
import { existsSync, mkdtempSync, readdirSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { root } from '../helpers/solved.js';

// Ctrl-C during `tessera solve` must leave neither a table nor a temp file (writes are temp + rename).
describe('interrupting tessera solve', () => {
  it('SIGINT mid-run leaves no output and no temp file', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'tessera-int-'));
    const out = join(dir, 'table.json');
    const cli = join(root, 'dist', 'src', 'cli', 'main.js');
    const child = spawn(process.execPath, [cli, 'solve', join(root, 'test', 'fixtures', 'problems', 'two-carts-4d.json'), '-o', out, '--lp', 'reference']);
    let stdout = '';
    child.stdout.on('data', (d) => (stdout += d));
    await new Promise((r) => setTimeout(r, 1500));
    const stillRunning = child.exitCode === null;
    child.kill('SIGINT');
    const code = await new Promise<number | null>((r) => child.on('close', (c, sig) => r(c ?? (sig ? 130 : null))));
    expect(stillRunning, 'the solve (reference LP engine, several seconds) was still running when interrupted').toBe(true);
    expect(code).not.toBe(0);
    expect(stdout).not.toContain('table written');
    expect(existsSync(out)).toBe(false);
    expect(readdirSync(dir)).toEqual([]);
    rmSync(dir, { recursive: true, force: true });
  }, 30000);
});
