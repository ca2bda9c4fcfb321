/** `tessera emit` end to end: files written, report figures, bad input with exit code 2 and no output. */
import { describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { existsSync, readFileSync, readdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { tableToJson } from '../../src/table/table.js';
import { emitC } from '../../src/emit/index.js';
import { tempDir, STRICT } from './helpers.js';
import { arrangementTable } from './synthetic.js';

const MAIN = join(import.meta.dirname, '../../src/cli/main.ts');

function tessera(args: string[]): { status: number | null; stdout: string; stderr: string } {
  const r = spawnSync(process.execPath, ['--import', 'tsx', MAIN, ...args], { encoding: 'utf8' });
  return { status: r.status, stdout: r.stdout, stderr: r.stderr };
}

const table = arrangementTable({ lower: [-2, -1], upper: [2, 1], planes: 10, seed: 4 });

describe('tessera emit', () => {
  it('writes header, source, tree side file, report and CSV arrays; the report matches the library figures', () => {
    const dir = tempDir('cli');
    const tablePath = join(dir, 't.table.json');
    writeFileSync(tablePath, tableToJson(table));
    const out = join(dir, 'gen');
    // --search tree named: the default is now auto, which may pick another structure (changed on purpose)
    const r = tessera(['emit', tablePath, '--lang', 'c', '--precision', 'float', '--search', 'tree', '--prefix', 'ctl', '-o', out, '--certify', '--report', join(dir, 'rep.json'), '--arrays', 'csv']);
    expect(r.status).toBe(0);
    expect(r.stdout).toMatch(/float certificate on \d+ points/);
    expect(r.stdout).toMatch(/(SAFE|NOT SAFE) at tolerance/);
    for (const f of ['ctl.h', 'ctl.c', 'ctl.tree.json', 'ctl_region_a.csv', 'ctl_node_left.csv']) expect(existsSync(join(out, f))).toBe(true);
    const rep = JSON.parse(readFileSync(join(dir, 'rep.json'), 'utf8'));
    const lib = emitC(table, { precision: 'float', search: 'tree', prefix: 'ctl' });
    expect(rep.cost.worstDepth).toBe(lib.cost.worstDepth);
    expect(rep.cost.bytes.float.total).toBe(lib.cost.bytes.float.total);
    expect(rep.cost.bytes.double.total).toBe(lib.cost.bytes.double.total);
    expect(rep.certificate.points.total).toBeGreaterThanOrEqual(20000);
    expect(readFileSync(join(out, 'ctl.c'), 'utf8')).toBe(lib.source);
    const gcc = spawnSync('gcc', [...STRICT, '-c', '-o', join(dir, 'ctl.o'), join(out, 'ctl.c')], { encoding: 'utf8' });
    expect(gcc.status).toBe(0);
    // the tree side file is reused when given back, and refused for another table
    const again = tessera(['emit', tablePath, '--search', 'tree', '--prefix', 'ctl', '-o', join(dir, 'gen2'), '--tree', join(out, 'ctl.tree.json')]);
    expect(again.status).toBe(0);
    expect(readFileSync(join(dir, 'gen2', 'ctl.c'), 'utf8')).toBe(lib.source);
    const other = join(dir, 'other.table.json');
    writeFileSync(other, tableToJson(arrangementTable({ lower: [-2, -1], upper: [2, 1], planes: 9, seed: 4 })));
    const refused = tessera(['emit', other, '--search', 'tree', '-o', join(dir, 'gen3'), '--tree', join(out, 'ctl.tree.json')]);
    expect(refused.status).toBe(2);
    expect(refused.stderr).toMatch(/ctl\.tree\.json: tableHash: built for table/);
    expect(existsSync(join(dir, 'gen3'))).toBe(false);
  }, 60000);

  it('--search auto (the default) states the chosen structure and why; capped, broad, boxtree and grid by name; bad names and --tree without tree refused', () => {
    const dir = tempDir('cli-search');
    const tablePath = join(dir, 't.table.json');
    writeFileSync(tablePath, tableToJson(table));
    const auto = tessera(['emit', tablePath, '-o', join(dir, 'auto'), '--report', join(dir, 'auto.json')]);
    expect(auto.status).toBe(0);
    const rep = JSON.parse(readFileSync(join(dir, 'auto.json'), 'utf8'));
    expect(rep.searchRequested).toBe('auto');
    expect(rep.candidates.map((c: { search: string }) => c.search)).toEqual(['tree', 'capped', 'broad', 'boxtree', 'grid', 'sequential']);
    const chosen = rep.candidates.find((c: { search: string }) => c.search === rep.search);
    expect(chosen.rejected).toBeNull();
    // a float build never takes the plain tree (no side overlap in its descent): listed, not built
    expect(rep.candidates[0].rejected).toMatch(/descent not proven safe in float .*not built/);
    expect(rep.candidates[0].worstMultiplyAdds).toBeNull();
    expect(chosen.locationBytes).toBeLessThanOrEqual(0.5 * chosen.regionBytes);
    // among the admissible ones whose worst case is within 1.5x of the least: the fewest latency-weighted
    // operations on average (each candidate's figure is in the report), so the chosen worst case is within 1.5x of every one
    const worst = (c: { worstMultiplyAdds: number; worstComparisons: number }) => c.worstMultiplyAdds + c.worstComparisons;
    const admissible = rep.candidates.filter((c: { rejected: string | null }) => !c.rejected);
    const least = Math.min(...admissible.map(worst));
    expect(worst(chosen)).toBeLessThanOrEqual(1.5 * least);
    for (const c of admissible) if (worst(c) <= 1.5 * least) expect(chosen.latencyWeightedOperations).toBeLessThanOrEqual(c.latencyWeightedOperations);
    const header = readFileSync(join(dir, 'auto', 'tessera_law.h'), 'utf8');
    expect(header).toContain(`${rep.search} search, chosen by the cost model`);
    expect(auto.stdout).toContain(`${rep.search} search, chosen by the cost model`);
    for (const search of ['capped', 'broad', 'boxtree', 'grid']) {
      const r = tessera(['emit', tablePath, '--search', search, '-o', join(dir, search), '--report', join(dir, `${search}.json`)]);
      expect(r.status).toBe(0);
      expect(JSON.parse(readFileSync(join(dir, `${search}.json`), 'utf8')).search).toBe(search);
      expect(readFileSync(join(dir, search, 'tessera_law.h'), 'utf8')).toContain(`${search} search, named by the caller`);
      const gcc = spawnSync('gcc', [...STRICT, '-c', '-o', join(dir, `${search}.o`), join(dir, search, 'tessera_law.c')], { encoding: 'utf8' });
      expect(gcc.status).toBe(0);
    }
    for (const [args, re] of [
      [['--search', 'kd'], /^tessera: \(command line\): --search: expected one of auto, tree, capped, broad, boxtree, grid, sequential/],
      [['--search', 'capped', '--tree', join(dir, 'x.tree.json')], /^tessera: \(command line\): --tree: a tree side file needs --search tree/],
    ] as [string[], RegExp][]) {
      const r = tessera(['emit', tablePath, ...args, '-o', join(dir, 'bad')]);
      expect(r.status).toBe(2);
      expect(r.stderr.trim().split('\n').length).toBe(1);
      expect(r.stderr).toMatch(re);
      expect(existsSync(join(dir, 'bad'))).toBe(false);
    }
  }, 120000);

  it('marks an incomplete table in the header and the report', () => {
    const dir = tempDir('cli-inc');
    const t = { ...table, stats: { ...table.stats, complete: false, stopReason: 'max-regions' as const } };
    writeFileSync(join(dir, 't.json'), tableToJson(t));
    const r = tessera(['emit', join(dir, 't.json'), '--search', 'sequential', '-o', join(dir, 'g'), '--report', join(dir, 'r.json')]);
    expect(r.status).toBe(0);
    expect(r.stdout).toContain('INCOMPLETE TABLE');
    expect(readFileSync(join(dir, 'g', 'tessera_law.h'), 'utf8')).toContain('INCOMPLETE TABLE');
    expect(JSON.parse(readFileSync(join(dir, 'r.json'), 'utf8')).complete).toBe(false);
  }, 30000);

  it('rejects bad input with one line naming file and key, exit 2, and writes nothing', () => {
    const dir = tempDir('cli-bad');
    writeFileSync(join(dir, 't.json'), tableToJson(table));
    const cases: [string[], RegExp][] = [
      [['emit', join(dir, 't.json'), '--prefix', '9lives', '-o', join(dir, 'a')], /^tessera: \(command line\): --prefix: "9lives" must be a C identifier/],
      [['emit', join(dir, 't.json'), '--precision', 'half', '-o', join(dir, 'b')], /^tessera: \(command line\): --precision: expected one of float, double/],
      [['emit', join(dir, 'missing.json'), '-o', join(dir, 'c')], /^tessera: .*missing\.json: cannot read table file/],
    ];
    for (const [args, re] of cases) {
      const r = tessera(args);
      expect(r.status).toBe(2);
      expect(r.stderr.trim().split('\n').length).toBe(1);
      expect(r.stderr).toMatch(re);
    }
    expect(readdirSync(dir)).toEqual(['t.json']);
  }, 30000);
});
