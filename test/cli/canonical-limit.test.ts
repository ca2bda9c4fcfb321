import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { runCli, type CliRun } from '../helpers/cli.js';

// `solve --time-limit` bounds the canonical form too (src/mpqp/canonical.ts): a neighbours step the
// limit cuts marks the table incomplete and says so, never a table with silently missing
// neighbours (common practice for bounded solvers: a stop is reported, the answer is not shortened
// in silence). A limit that is not reached changes nothing: the table is the bytes of an unbounded
// run (the canonical form depends on the regions alone).

const root = join(import.meta.dirname, '..', '..');
const thermal = join(root, 'examples', 'thermal-zone-pair.json');
const axis = join(root, 'examples', 'positioning-axis.yaml');
let dir = '';
let cut: CliRun;
let free: CliRun;
let bounded: CliRun;

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'tessera-canon-limit-'));
  [cut, free, bounded] = await Promise.all([
    runCli(['solve', thermal, '-o', join(dir, 'cut.json'), '--time-limit', '0.001', '--threads', '1'], { killAfter: 110_000 }),
    runCli(['solve', axis, '-o', join(dir, 'free.json'), '--threads', '1'], { killAfter: 110_000 }),
    runCli(['solve', axis, '-o', join(dir, 'bounded.json'), '--threads', '1', '--time-limit', '600'], { killAfter: 110_000 }),
  ]);
}, 120_000);
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('solve --time-limit and the canonical form', () => {
  it('a limit passed before the neighbours step: table incomplete (time-limit), no neighbour listed, the summary says the lists are not finished', () => {
    expect(cut.status).toBe(0);
    const t = JSON.parse(readFileSync(join(dir, 'cut.json'), 'utf8'));
    expect(t.stats.complete).toBe(false);
    expect(t.stats.stopReason).toBe('time-limit');
    expect(t.regions.length).toBeGreaterThan(0);
    for (const R of t.regions) for (const f of R.facets) expect(f.neighbours).toEqual([]);
    expect(cut.stdout).toMatch(/complete: NO \(stopped: time-limit\)/);
    expect(cut.stdout).toMatch(/neighbour lists: NOT finished/);
  });
  it('a limit not reached: complete, the same bytes as the run without a limit, no warning about neighbour lists', () => {
    expect(free.status).toBe(0);
    expect(bounded.status).toBe(0);
    expect(bounded.stdout).toMatch(/complete: yes/);
    expect(bounded.stdout).not.toMatch(/neighbour lists/);
    expect(readFileSync(join(dir, 'bounded.json'), 'utf8')).toBe(readFileSync(join(dir, 'free.json'), 'utf8'));
  });
});
