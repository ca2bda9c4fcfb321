/**
 * Emit targets: the registry drives `--lang`, every registered target's self-test program agrees
 * with its own evaluator, and the array exports carry the language-neutral layout (element kinds and
 * ranges, no C types, no C padding). The reference for "agrees" is the compiled program run by gcc;
 * the layout check compares against the table's own numbers.
 */
import { describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { existsSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { tableToJson } from '../../src/table/table.js';
import { emit } from '../../src/emit/index.js';
import { TARGETS, targetLanguages } from '../../src/emit/targets/index.js';
import { sampleBox } from '../../src/emit/sample.js';
import { compile, exampleTable, run, tempDir } from './helpers.js';
import { arrangementTable, gridTable } from './synthetic.js';

const MAIN = join(import.meta.dirname, '../../src/cli/main.ts');
function tessera(args: string[]): { status: number | null; stdout: string; stderr: string } {
  const r = spawnSync(process.execPath, ['--import', 'tsx', MAIN, ...args], { encoding: 'utf8' });
  return { status: r.status, stdout: r.stdout, stderr: r.stderr };
}

describe('target registry', () => {
  const table = exampleTable('buck-duty-cycle.json').table;
  for (const target of TARGETS)
    for (const precision of target.precisions)
      for (const search of ['tree', 'sequential'] as const)
        it(`${target.id} ${precision} ${search}: the target's self-test matches its evaluator on 2000 seeded points`, () => {
          const r = emit(table, { lang: target.lang, precision, search, prefix: 'law' });
          expect(r.target).toBe(target);
          const pts = sampleBox(table.box, 2000, 21);
          const expected = pts.map((p) => target.evaluate(r.arrays, p));
          const st = target.selfTest(r.arrays, 'law', pts, expected);
          const files = Object.fromEntries([...r.files, st].map((f) => [f.name, f.text]));
          const { exe } = compile('target', files, [...r.files.filter((f) => f.name.endsWith('.c')).map((f) => f.name), st.name]);
          const res = run(exe);
          expect(res.stdout).toMatch(/selftest: 2000 points, 0 mismatches\n$/);
          expect(res.status).toBe(0);
          expect(expected.filter((e) => e.region >= 0).length).toBeGreaterThan(1000);
          // the cost report names the built precision and its total is the sum of its arrays
          const b = r.cost.bytes[precision];
          expect(b.total).toBe(b.arrays.reduce((s, a) => s + a.bytes, 0));
        }, 60000);

  it('--lang offers exactly the registered languages; an unknown one is refused naming them', () => {
    const help = tessera(['emit', '--help']);
    for (const t of TARGETS) expect(help.stdout).toContain(`${t.lang} (${t.precisions.join('/')}`);
    const dir = tempDir('lang');
    writeFileSync(join(dir, 't.json'), tableToJson(table));
    const r = tessera(['emit', join(dir, 't.json'), '--lang', 'fortran', '-o', join(dir, 'g')]);
    expect(r.status).toBe(2);
    expect(r.stderr.trim()).toBe(`tessera: (command line): --lang: expected one of ${targetLanguages().join(', ')}, got "fortran"`);
    expect(existsSync(join(dir, 'g'))).toBe(false);
  }, 30000);
});

describe('array exports are language-neutral', () => {
  it('JSON: kinds and ranges instead of C types; CSV: an empty array stays empty (no C padding)', () => {
    // a one-region tree has no nodes: C leaves node arrays out, the exports keep them empty (--search tree named: the default is now auto, changed on purpose)
    const one = gridTable(1, () => ({ F: [[0.5, -0.25]], g: [0.1] }));
    const dir = tempDir('export');
    writeFileSync(join(dir, 'one.json'), tableToJson(one));
    expect(tessera(['emit', join(dir, 'one.json'), '--precision', 'double', '--search', 'tree', '-o', join(dir, 'j'), '--arrays', 'json']).status).toBe(0);
    const j = JSON.parse(readFileSync(join(dir, 'j', 'tessera_law_arrays.json'), 'utf8'));
    expect(JSON.stringify(j)).not.toMatch(/ctype|int16_t|uint16_t|int32_t/);
    expect(j.arrays.node_left).toEqual({ kind: 'i-index', values: [], range: [0, 0] });
    expect(j.arrays.leaf_region).toEqual({ kind: 'u-index', values: [0], range: [0, 0] });
    expect(j.arrays.leaf_start).toEqual({ kind: 'u-count', values: [0, 1], range: [0, 1] });
    // the region of [0,1]² (grid of one cell): law 0.1 + 0.5θ₀ − 0.25θ₁, by construction
    expect(j.arrays.law_f).toEqual({ kind: 'f-real', values: [0.5, -0.25], range: [-0.25, 0.5] });
    expect(j.arrays.law_g.values).toEqual([0.1]);
    expect(tessera(['emit', join(dir, 'one.json'), '--search', 'tree', '-o', join(dir, 'c'), '--arrays', 'csv']).status).toBe(0);
    expect(readFileSync(join(dir, 'c', 'tessera_law_node_plane.csv'), 'utf8')).toBe('index,value\n');
    expect(readFileSync(join(dir, 'c', 'tessera_law_leaf_start.csv'), 'utf8')).toBe('index,value\n0,0\n1,1\n');
    // while the C itself declares no node arrays
    expect(readFileSync(join(dir, 'c', 'tessera_law.c'), 'utf8')).not.toContain('node_plane');
  }, 30000);

  it('JSON of a tree build: signed references and their range cover the root and every leaf', () => {
    const t = arrangementTable({ lower: [-2, -1], upper: [2, 1], planes: 8, seed: 3 });
    const r = emit(t, { precision: 'float', search: 'tree', prefix: 'law' });
    const lay = r.target.layout(r.arrays);
    const left = lay.find((a) => a.name === 'node_left')!;
    expect(left.kind).toBe('i-index');
    expect(left.range[0]).toBeLessThan(0); // leaves are negative references
    expect(left.range).toEqual([Math.min(...left.values), Math.max(...left.values)]);
  });
});
