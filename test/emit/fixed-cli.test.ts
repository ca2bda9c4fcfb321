/**
 * `tessera emit --precision q15|q31`, `--theta-frac`, `--certify` and `--target-check` through the
 * CLI: SAFE/NOT SAFE with the exit code, an overflowing scaling refused (exit 2, nothing written),
 * and the cross-build report on every example. The cross-build references are the ARM toolchain's
 * own tools (arm-none-eabi-gcc -Werror, size, nm); the worst-path counter is checked against a
 * listing counted by hand.
 */
import { describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { existsSync, readFileSync, readdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { tableToJson } from '../../src/table/table.js';
import { emit } from '../../src/emit/index.js';
import { CORES, parseObjdump, worstPath } from '../../src/emit/crossbuild.js';
import { TREE_EXAMPLES as EXAMPLES, exampleTable, tempDir } from './helpers.js';

const MAIN = join(import.meta.dirname, '../../src/cli/main.ts');
function tessera(args: string[]): { status: number | null; stdout: string; stderr: string } {
  const r = spawnSync(process.execPath, ['--import', 'tsx', MAIN, ...args], { encoding: 'utf8' });
  return { status: r.status, stdout: r.stdout, stderr: r.stderr };
}

function tableFile(ex: string): { dir: string; path: string } {
  const dir = tempDir('fixed-cli');
  const path = join(dir, 't.table.json');
  writeFileSync(path, tableToJson(exampleTable(ex).table));
  return { dir, path };
}

describe('emit --precision q15|q31 --certify', () => {
  const ex = 'valve-actuator.json';
  it('q15: SAFE, exit 0, scaling and overflow proof in the report and header', () => {
    const { dir, path } = tableFile(ex);
    const r = tessera(['emit', path, '--precision', 'q15', '--certify', '-o', join(dir, 'g'), '--report', join(dir, 'r.json'), '--arrays', 'json']);
    expect(r.status).toBe(0);
    expect(r.stdout).toMatch(/q15 certificate on \d+ points/);
    expect(r.stdout).toMatch(/\n {2}SAFE at tolerance .* no intermediate can overflow/);
    const rep = JSON.parse(readFileSync(join(dir, 'r.json'), 'utf8'));
    expect(rep.target).toBe('c-fixed');
    expect(rep.overflow.ok).toBe(true);
    expect(rep.certificate.safe).toBe(true);
    expect(rep.scaling.thetaFrac.length).toBe(3);
    const h = readFileSync(join(dir, 'g', 'tessera_law.h'), 'utf8');
    expect(h).toContain('int tessera_law_eval(const int16_t theta_q[TESSERA_LAW_NT], int16_t u_q[TESSERA_LAW_NU]);');
    rep.scaling.thetaFrac.forEach((t: number, j: number) => expect(h).toContain(`#define TESSERA_LAW_THETA_FRAC_${j} ${t}`));
    const arrays = JSON.parse(readFileSync(join(dir, 'g', 'tessera_law_arrays.json'), 'utf8'));
    expect(arrays.arrays.region_a.kind).toBe('q-fixed');
    expect(arrays.arrays.region_a.fixed).toEqual({ bits: 16, frac: rep.scaling.thetaFrac.map((t: number) => rep.scaling.shifts.regions - t) });
    expect(arrays.arrays.region_b.fixed.bits).toBe(32);
  }, 60000);

  it('a deliberately too narrow θ format is caught: NOT SAFE, exit 1', () => {
    const { dir, path } = tableFile(ex);
    const r = tessera(['emit', path, '--precision', 'q15', '--theta-frac', '4,4,4', '--certify', '-o', join(dir, 'g')]);
    expect(r.stdout).toMatch(/\n {2}NOT SAFE at tolerance [^\n]*max \|u_fixed - u_double\| = [0-9.e-]+ exceeds it/);
    expect(r.status).toBe(1);
  }, 60000);

  it('a scaling that overflows is refused with one clear line, exit 2, nothing written', () => {
    const { dir, path } = tableFile(ex);
    // the valve example's box is [-1, 1] in every θ: 2^15 · 1 does not fit int16_t
    const r = tessera(['emit', path, '--precision', 'q15', '--theta-frac', '15,14,14', '-o', join(dir, 'g')]);
    expect(r.status).toBe(2);
    expect(r.stderr.trim()).toMatch(/^tessera: \(command line\): --theta-frac: θ\[0\] \(\w+\) overflows int16_t: its box bound 1\.00000 at 2\^15 is 32770 > 32767; use at most 14 fraction bits$/);
    expect(existsSync(join(dir, 'g'))).toBe(false);
    const wrong = tessera(['emit', path, '--theta-frac', '10,10,10', '-o', join(dir, 'h')]);
    expect(wrong.status).toBe(2);
    expect(wrong.stderr).toMatch(/--theta-frac: applies to the fixed-point precisions only \(q15, q31\)/);
    expect(readdirSync(dir)).toEqual(['t.table.json']);
  }, 60000);
});

describe('emit --target-check on every example', () => {
  for (const ex of EXAMPLES)
    it(`${ex}: M0/M4F builds compile with -Werror, sizes, no soft float in fixed and M4F float, worst path counted`, () => {
      const { dir, path } = tableFile(ex);
      // --search tree named: the default is now auto, which --target-check restricts to tree or sequential (changed on purpose)
      const r = tessera(['emit', path, '--target-check', '--search', 'tree', '-o', join(dir, 'g'), '--report', join(dir, 'r.json')]);
      expect(r.stderr).toBe('');
      expect(r.status).toBe(0);
      expect(r.stdout).toContain('nm: the q15/q31 builds (both cores) and the Cortex-M4F float build call no software floating-point helper');
      const rep = JSON.parse(readFileSync(join(dir, 'r.json'), 'utf8')).targetCheck;
      expect(rep.flags).toEqual(expect.arrayContaining(['-ffreestanding', '-Werror', '-std=c99']));
      expect(rep.builds.length).toBe(6);
      const table = exampleTable(ex).table;
      for (const b of rep.builds) {
        const lib = emit(table, { lang: 'c', precision: b.build, search: 'tree', prefix: 'tessera_law' });
        // .rodata holds exactly the arrays (alignment padding of at most 7 bytes each)
        const arrays = lib.cost.bytes[b.build];
        expect(b.rodata).toBeGreaterThanOrEqual(arrays.total);
        expect(b.rodata).toBeLessThanOrEqual(arrays.total + 8 * arrays.arrays.length);
        expect(b.text).toBeGreaterThan(100);
        if (b.build !== 'float' || b.core === 'Cortex-M4F') expect(b.softFloatCalls).toEqual([]);
        else expect(b.softFloatCalls).toEqual(expect.arrayContaining(['__aeabi_fadd', '__aeabi_fmul'])); // the M0 float build needs software float
        expect(b.countError).toBeUndefined();
        // at least one instruction per multiply-add of the worst case, at least one cycle per instruction
        expect(b.worst.instructions).toBeGreaterThanOrEqual(lib.cost.worstMultiplyAdds);
        expect(b.worst.cycles).toBeGreaterThanOrEqual(b.worst.instructions);
        expect(b.worst.leafDepth).toBeLessThanOrEqual(lib.cost.worstDepth);
      }
      // software float on the M0 costs more than integer arithmetic on the same path (common
      // practice: the M0 has no FPU, every float add and multiply is a libgcc call). At least 2×:
      // the float build writes its sums out term by term (no loop counter per product) while the
      // q15 build keeps its loops, so the gap is 2.1–2.8× on the smallest examples and more on the rest
      const m0 = (build: string) => rep.builds.find((b: { core: string; build: string }) => b.core === 'Cortex-M0' && b.build === build).worst.cycles;
      expect(m0('float')).toBeGreaterThan(2 * m0('q15'));
    }, 120000);
});

describe('emit --target-check with sequential search', () => {
  it('the worst path visits every region and costs at least nθ + 1 instructions per row', () => {
    const ex = 'buck-duty-cycle.json';
    const { dir, path } = tableFile(ex);
    const r = tessera(['emit', path, '--search', 'sequential', '--target-check', '-o', join(dir, 'g'), '--report', join(dir, 'r.json')]);
    expect(r.status).toBe(0);
    const rep = JSON.parse(readFileSync(join(dir, 'r.json'), 'utf8')).targetCheck;
    const table = exampleTable(ex).table;
    const rows = table.regions.reduce((s, g) => s + g.b.length, 0);
    for (const b of rep.builds) {
      expect(b.countError).toBeUndefined();
      expect(b.worst.leafRegions).toBe(table.regions.length);
      expect(b.worst.leafDepth).toBe(0);
      // every row costs at least its nθ multiply-adds and one comparison
      expect(b.worst.instructions).toBeGreaterThanOrEqual(rows * (table.dims.ntheta + 1));
    }
  }, 120000);
});

describe('worst-path counter', () => {
  // hand count: entry 2 instructions; loop header block (3) + body (2) run `bound` times, plus the
  // final pass to the exit (header 3 instructions); exit block 2 instructions ending in a return
  const listing = `
00000000 <f>:
   0:\tpush\t{r4, lr}
   2:\tmovs\tr3, #0
   4:\tadds\tr3, #1
   6:\tcmp\tr3, r0
   8:\tbge.n\t10 <f+0x10>
   a:\tadds\tr4, r4, r3
   c:\tb.n\t4 <f+0x4>
   e:\tnop
  10:\tmovs\tr0, r4
  12:\tpop\t{r4, pc}
`;
  it('timing schema on a counted loop: bound × pass + exit pass, calls and cycles from the table', () => {
    const [fn] = parseObjdump(listing);
    const r = worstPath(fn, (l) => (l.depth === 1 ? 5 : null), CORES['cortex-m0'], () => null);
    if ('error' in r) throw new Error(r.error);
    // blocks: [0,2] [4,6,8] [a,c] [e] [10,12]; pass = 3 + 2 = 5, exit pass = 3; the nop block is unreachable
    expect(r.instructions).toBe(2 + 5 * 5 + 3 + 2);
    // cycles on the M0 table: push {r4,lr} 1+2, movs 1; pass: adds 1, cmp 1, bge 3, adds 1, b 3 = 9;
    // exit pass: adds, cmp, bge = 5; movs 1, pop {r4,pc} 1+2+2
    expect(r.cycles).toBe(3 + 1 + 5 * 9 + 5 + 1 + 5);
    expect(worstPath(fn, () => null, CORES['cortex-m0'], () => null)).toHaveProperty('error');
  });
});
