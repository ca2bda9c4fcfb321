/**
 * `emit --target-check`: compile the generated C (float, q15, q31) for Cortex-M0 and Cortex-M4F
 * with Debian's arm-none-eabi-gcc (compile only, freestanding, no libc), then read the objects:
 * section sizes, undefined symbols (soft-float helpers must be absent from the fixed builds and the
 * M4F float build) and the worst-case instruction/cycle count of one evaluation along the worst
 * path of the search structure (src/emit/crossbuild.ts).
 */
import { execFileSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { TableFile } from '../table/format.js';
import type { SearchTree } from '../partition/tree.js';
import { leafDepths } from '../partition/tree.js';
import { InputError } from '../io/errors.js';
import { emit } from '../emit/index.js';
import type { SearchKind } from '../emit/arrays.js';
import { CORES, parseObjdump, parseSizeA, softFloatHelpers, undefinedSymbols, worstPath, type CycleTable, type DisassembledFunction, type LoopInfo, type PathCount } from '../emit/crossbuild.js';

/** Flags of every cross build: the strict set, freestanding, and a layout the path count can read (no inlining, no unrolling). */
export const CROSS_FLAGS = ['-std=c99', '-Wall', '-Wextra', '-Wpedantic', '-Werror', '-O2', '-ffreestanding', '-ffp-contract=off', '-fno-inline', '-fno-unroll-loops', '-fno-ipa-cp-clone', '-fno-partial-inlining', '--param', 'max-completely-peel-times=0'];
export const CROSS_BUILDS = ['float', 'q15', 'q31'] as const;
const CC = 'arm-none-eabi-gcc';

export interface CoreBuildReport {
  core: string;
  build: (typeof CROSS_BUILDS)[number];
  text: number;
  rodata: number;
  undefinedSymbols: string[];
  softFloatCalls: string[];
  /** worst evaluation: instructions and cycles on the worst path of the structure (null when not countable) */
  worst: { instructions: number; cycles: number; leafDepth: number; leafRegions: number; helperCalls: Record<string, number> } | null;
  countError?: string;
  cycleTable: string;
}

export interface TargetCheckReport {
  compiler: string;
  flags: string[];
  search: SearchKind;
  builds: CoreBuildReport[];
  /** the fixed builds and the M4F float build call no soft-float helper */
  noSoftFloat: boolean;
}

function tool(name: string, args: string[], cwd?: string): string {
  try {
    return execFileSync(name, args, { cwd, encoding: 'utf8', maxBuffer: 256 * 1024 * 1024, stdio: ['ignore', 'pipe', 'pipe'] });
  } catch (e) {
    const err = e as { code?: string; stderr?: string };
    if (err.code === 'ENOENT') throw new InputError('(environment)', name, `not found: install Debian's gcc-arm-none-eabi (apt-get install gcc-arm-none-eabi)`);
    throw new Error(`${name} ${args.join(' ')} failed: ${(err.stderr ?? String(e)).trim().split('\n').slice(0, 5).join(' | ')}`);
  }
}

const libgccCache = new Map<string, DisassembledFunction[]>();
function libgccFunctions(core: CycleTable): DisassembledFunction[] {
  const key = core.flags.join(' ');
  let fns = libgccCache.get(key);
  if (!fns) {
    const lib = tool(CC, [...core.flags, '-print-libgcc-file-name']).trim();
    fns = parseObjdump(tool('arm-none-eabi-objdump', ['-dr', '--no-show-raw-insn', lib]));
    libgccCache.set(key, fns);
  }
  return fns;
}

/** Per-leaf (or whole-table) structure of the worst path: descent depth, candidate regions and their rows. */
function pathShapes(search: SearchKind, table: TableFile, tree: SearchTree | null): { depth: number; regions: number; rows: number }[] {
  const rows = (r: number) => table.regions[r].b.length;
  if (search === 'sequential') return [{ depth: 0, regions: table.regions.length, rows: table.regions.reduce((s, _, r) => s + rows(r), 0) }];
  const t = tree!;
  const depths = leafDepths({ root: t.root, nodeLeft: t.nodeLeft, nodeRight: t.nodeRight, leafStart: t.leafStart });
  const seen = new Map<string, { depth: number; regions: number; rows: number }>();
  depths.forEach((d, leaf) => {
    let rr = 0;
    for (let k = t.leafStart[leaf]; k < t.leafStart[leaf + 1]; k++) rr += rows(t.leafRegions[k]);
    const shape = { depth: d, regions: t.leafStart[leaf + 1] - t.leafStart[leaf], rows: rr };
    seen.set(`${shape.depth}/${shape.regions}/${shape.rows}`, shape);
  });
  return [...seen.values()];
}

/**
 * Worst path of one object: the generated functions (prefix_*) with loop bounds from the structure,
 * helpers from libgcc. Returns the count of the worst leaf.
 */
function countWorst(objdump: string, prefix: string, table: TableFile, search: SearchKind, tree: SearchTree | null, core: CycleTable, pairedDescent: boolean): CoreBuildReport['worst'] | string {
  const fns = parseObjdump(objdump);
  const local = new Map(fns.map((f) => [f.name.split('.')[0], f]));
  const lib = new Map(libgccFunctions(core).map((f) => [f.name, f]));
  const nt = table.dims.ntheta;
  const nu = table.dims.nu;
  const fname = (s: string) => s.slice(prefix.length + 1);
  const helperMemo = new Map<string, PathCount | null>();
  const helper = (name: string, depth = 0): PathCount | null => {
    if (helperMemo.has(name)) return helperMemo.get(name)!;
    const f = lib.get(name);
    let res: PathCount | null = null;
    if (f && depth < 4) {
      // run-time helpers are counted only when loop-free (a loop there has no bound we could state)
      const r = worstPath(f, () => null, core, (n) => helper(n, depth + 1));
      res = 'error' in r ? null : r;
    }
    helperMemo.set(name, res);
    return res;
  };
  const bounds = (fn: string, p: { rows: number; depth: number; regions: number }) => (l: LoopInfo): number | null => {
    switch (fn) {
      case 'in_box':
        return l.depth === 1 ? nt : null;
      case 'inside': // rows of the region, then j = 1..nθ−1 (the first product starts the sum)
        return l.depth === 1 ? p.rows : l.depth === 2 ? nt - 1 : null;
      case 'fit': // float best fit: θ − c over nθ (no inner loop), then the rows as in inside
        if (l.depth === 1) return l.children > 0 ? p.rows : nt;
        return l.depth === 2 ? nt - 1 : null;
      case 'law':
        if (l.depth === 1) return l.children > 0 ? nu : Math.max(nu, nt);
        return l.depth === 2 ? nt : null;
      case 'eval':
        if (l.depth === 1 && l.calls.some((c) => c.startsWith(`${prefix}_inside`) || c.startsWith(`${prefix}_fit`))) return p.regions;
        // the float/double descent takes two levels per pass, the fixed-point one a level per pass
        if (l.depth === 1 && search === 'tree') return pairedDescent ? Math.ceil(p.depth / 2) : p.depth;
        return l.depth === 2 && search === 'tree' ? nt - 1 : null;
      default:
        return null;
    }
  };
  const count = (fn: string, p: { rows: number; depth: number; regions: number }): PathCount | string => {
    const f = local.get(`${prefix}_${fn}`);
    if (!f) return `${prefix}_${fn} not found in the object`;
    const r = worstPath(f, bounds(fn, p), core, (callee) => {
      const base = callee.split('.')[0];
      if (base.startsWith(`${prefix}_`)) {
        const c = count(fname(base), p);
        if (typeof c === 'string') throw new Error(c);
        return c;
      }
      return helper(callee);
    });
    return 'error' in r ? r.error : r;
  };
  let worst = null as CoreBuildReport['worst'];
  try {
    for (const shape of pathShapes(search, table, tree)) {
      if (shape.regions === 0) continue;
      // every candidate region's rows all tested; per-call rows at their mean over the leaf, which
      // makes regions × cost(inside) equal the sum over the leaf's regions (the count is linear in rows)
      const c = count('eval', { depth: shape.depth, regions: shape.regions, rows: shape.rows / shape.regions });
      if (typeof c === 'string') return c;
      // the two maxima are taken separately (they may come from different leaves); the leaf shown is the cycle-worst one
      if (!worst || c.cycles > worst.cycles)
        worst = { instructions: Math.max(worst?.instructions ?? 0, Math.ceil(c.instructions)), cycles: Math.ceil(c.cycles), leafDepth: shape.depth, leafRegions: shape.regions, helperCalls: roundCalls(c.helperCalls) };
      else worst!.instructions = Math.max(worst!.instructions, Math.ceil(c.instructions));
    }
  } catch (e) {
    return (e as Error).message;
  }
  return worst;
}

function roundCalls(c: Record<string, number>): Record<string, number> {
  const o: Record<string, number> = {};
  for (const [k, v] of Object.entries(c)) o[k] = Math.ceil(v);
  return o;
}

export function compilerVersion(): string {
  return tool(CC, ['--version']).split('\n')[0].trim();
}

export function targetCheck(table: TableFile, search: SearchKind, tree: SearchTree | null, prefix: string): TargetCheckReport {
  const compiler = compilerVersion();
  const dir = mkdtempSync(join(tmpdir(), 'tessera-target-'));
  const builds: CoreBuildReport[] = [];
  try {
    for (const build of CROSS_BUILDS) {
      // a fixed-point build gets its own tree (regions within θ's rounding of a split on both sides)
      const fixed = build === 'q15' || build === 'q31';
      const r = emit(table, { lang: 'c', precision: build, search, prefix, tree: fixed ? undefined : (tree ?? undefined) });
      const sub = join(dir, build);
      execFileSync('mkdir', ['-p', sub]);
      for (const f of r.files) writeFileSync(join(sub, f.name), f.text);
      for (const key of ['cortex-m0', 'cortex-m4f'] as const) {
        const core = CORES[key];
        const obj = join(sub, `${key}.o`);
        tool(CC, [...CROSS_FLAGS, ...core.flags, '-c', '-o', obj, join(sub, `${prefix}.c`)], sub);
        const size = parseSizeA(tool('arm-none-eabi-size', ['-A', obj]));
        const undef = undefinedSymbols(tool('arm-none-eabi-nm', [obj]));
        const worst = countWorst(tool('arm-none-eabi-objdump', ['-dr', '--no-show-raw-insn', obj]), prefix, table, search, r.tree, core, !fixed);
        builds.push({
          core: core.core,
          build,
          text: size.text,
          rodata: size.rodata,
          undefinedSymbols: undef,
          softFloatCalls: softFloatHelpers(undef),
          worst: typeof worst === 'string' ? null : worst,
          countError: typeof worst === 'string' ? worst : undefined,
          cycleTable: core.notes,
        });
      }
    }
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
  const noSoftFloat = builds.every((b) => (b.build === 'float' && b.core === 'Cortex-M0') || b.softFloatCalls.length === 0);
  return { compiler, flags: CROSS_FLAGS, search, builds, noSoftFloat };
}

export function targetCheckLines(r: TargetCheckReport): string[] {
  const lines = [
    `  target check: ${r.compiler}; ${r.flags.join(' ')}; compile only, no libc`,
    `    ${'core'.padEnd(11)} ${'build'.padEnd(6)} ${'.text'.padStart(7)} ${'.rodata'.padStart(9)}  ${'worst path: instr'.padStart(18)} ${'cycles<='.padStart(9)}  soft-float helpers / other calls on the path`,
  ];
  for (const b of r.builds) {
    const calls = b.worst ? Object.entries(b.worst.helperCalls).filter(([k]) => k.startsWith('__')) : [];
    lines.push(
      `    ${b.core.padEnd(11)} ${b.build.padEnd(6)} ${String(b.text).padStart(7)} ${String(b.rodata).padStart(9)}  ${(b.worst ? String(b.worst.instructions) : 'n/a').padStart(18)} ${(b.worst ? String(b.worst.cycles) : 'n/a').padStart(9)}  ` +
        `${b.softFloatCalls.length ? b.softFloatCalls.join(' ') : 'none'}${calls.length ? ' / ' + calls.map(([k, v]) => `${k} x${v}`).join(' ') : ''}${b.countError ? `  (count unavailable: ${b.countError})` : ''}`,
    );
  }
  const w = r.builds.find((b) => b.worst);
  if (w?.worst) lines.push(`    worst path: leaf at depth ${w.worst.leafDepth} with ${w.worst.leafRegions} candidate region(s), every candidate's rows tested; branches counted as taken`);
  lines.push(`    cycle tables: M0: ${CORES['cortex-m0'].notes}; M4F: ${CORES['cortex-m4f'].notes}`);
  lines.push(
    r.noSoftFloat
      ? '    nm: the q15/q31 builds (both cores) and the Cortex-M4F float build call no software floating-point helper (__aeabi_f*, __aeabi_d*)'
      : '    nm: FAILED - a fixed-point build or the Cortex-M4F float build calls software floating-point helpers (see above)',
  );
  return lines;
}
