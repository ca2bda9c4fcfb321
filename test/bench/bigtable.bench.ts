/**
 * Large tables (issue: tables that scale). `npm run bench -- bigtable`.
 *
 * 1. Table size per region, full against lean, on the 4-D and 5-D fixtures (first
 *    TESSERA_BENCH_SIZE_REGIONS regions, default 3 000; the first N regions do not depend on N).
 * 2. Evaluation speed on a ~6k-region table (boom-4d-n12, first TESSERA_BENCH_EVAL_REGIONS = 6 000
 *    regions, lean): index build
 *    seconds, then points/s of `evaluateTable` and of the bare locator on 10⁶ seeded points,
 *    against the sequential scan on a few thousand (target ≥ 10⁶ points/s).
 * 3. A big table end to end: a generated 2-D mpQP whose regions are the cells of an arrangement
 *    of lines (a bank of independent saturating channels, invented) is solved lean up to
 *    TESSERA_BENCH_BIG_REGIONS (default 100 000) or TESSERA_BENCH_BIG_SECONDS (default 900), then
 *    written (streamed), read back (streaming reader), evaluated on 10⁶ points, mapped and emitted
 *    (C, double, box tree), printing seconds and the peak resident MB after each stage (target:
 *    all within 2 GB).
 * CPU seconds are printed beside wall seconds: the machine is shared, and CPU time is the fairer
 * figure under load (still inflated by contention).
 */
import { mkdtempSync, rmSync, statSync } from 'node:fs';
import { tmpdir, loadavg } from 'node:os';
import { join } from 'node:path';
import { loadProblem, parseProblem } from '../../src/problem/index.js';
import { solveProblem } from '../../src/table/solve.js';
import { readTableFile, writeTableFile } from '../../src/table/file.js';
import { evaluateTable, locateSequential } from '../../src/table/table.js';
import { tableLocator } from '../../src/table/locator.js';
import { tableToJson } from '../../src/table/table.js';
import { drawMap } from '../../src/plot/map.js';
import { emitC } from '../../src/emit/index.js';
import { tableProblem } from '../../src/table/solve.js';
import type { TableFile } from '../../src/table/format.js';

const dir = join(import.meta.dirname, '..', 'fixtures', 'scale');
const sizeRegions = Number(process.env.TESSERA_BENCH_SIZE_REGIONS ?? 3000);
const bigRegions = Number(process.env.TESSERA_BENCH_BIG_REGIONS ?? 100_000);
const bigSeconds = Number(process.env.TESSERA_BENCH_BIG_SECONDS ?? 900);
const evalRegions = Number(process.env.TESSERA_BENCH_EVAL_REGIONS ?? 6000);

const peakMb = (): number => process.resourceUsage().maxRSS / 1024;
const cpu = (): number => {
  const u = process.cpuUsage();
  return (u.user + u.system) / 1e6;
};

function timed<T>(f: () => T): { value: T; s: number; cpu: number } {
  const c0 = cpu();
  const t0 = performance.now();
  const value = f();
  return { value, s: (performance.now() - t0) / 1000, cpu: cpu() - c0 };
}

function seededPoints(table: TableFile, count: number, seed: number): Float64Array[] {
  let s = seed >>> 0;
  const rnd = (): number => ((s = (Math.imul(s, 1103515245) + 12345) >>> 0) / 4294967296);
  const n = table.dims.ntheta;
  const out: Float64Array[] = [];
  for (let i = 0; i < count; i++) {
    const p = new Float64Array(n);
    for (let j = 0; j < n; j++) p[j] = table.box.lower[j] + rnd() * (table.box.upper[j] - table.box.lower[j]);
    out.push(p);
  }
  return out;
}

function sizes(): void {
  console.log(`\ntable bytes per region, one region per line (first ${sizeRegions} regions):`);
  for (const name of ['boom-4d-n8', 'boom-4d-n12', 'mixer-5d-n10']) {
    const loaded = loadProblem(join(dir, `${name}.json`));
    const full = solveProblem(loaded, { maxRegions: sizeRegions }).table;
    const lean = solveProblem(loaded, { maxRegions: sizeRegions, lean: true }).table;
    const per = (t: TableFile) => tableToJson(t).length / t.regions.length;
    const old = JSON.stringify(full, null, 1).length / full.regions.length;
    console.log(
      `  ${name.padEnd(14)} ${String(full.regions.length).padStart(6)} regions  full ${per(full).toFixed(0).padStart(5)} B  lean ${per(lean).toFixed(0).padStart(5)} B  (version 2 layout, full: ${old.toFixed(0)} B)  target ≤ 1500 B lean in 4-D`,
    );
  }
}

function evaluateBench(): void {
  const loaded = loadProblem(join(dir, 'boom-4d-n12.json'));
  const solved = timed(() => solveProblem(loaded, { maxRegions: evalRegions, lean: true }));
  const table = solved.value.table;
  console.log(`\nevaluate on boom-4d-n12, first ${table.regions.length} regions (lean; solved in ${solved.s.toFixed(1)} s):`);
  const pts = seededPoints(table, 1_000_000, 0x5eed);
  const build = timed(() => tableLocator(table.regions, table.box.lower, table.box.upper));
  const loc = build.value;
  console.log(`  index: ${build.s.toFixed(2)} s (${build.cpu.toFixed(2)} s CPU) for ${JSON.stringify(loc.stats)}`);
  // warm the cached locator of evaluateTable
  for (let i = 0; i < 50; i++) evaluateTable(table, pts[i]);
  for (const round of [1, 2]) {
    const a = timed(() => {
      let f = 0;
      for (const p of pts) if (loc.locate(p) >= 0) f++;
      return f;
    });
    const b = timed(() => {
      let f = 0;
      for (const p of pts) if (evaluateTable(table, p).region >= 0) f++;
      return f;
    });
    console.log(
      `  round ${round}: locate ${(pts.length / a.s / 1e6).toFixed(2)} M points/s (${(pts.length / a.cpu / 1e6).toFixed(2)} per CPU s), evaluateTable (locate + law) ${(pts.length / b.s / 1e6).toFixed(2)} M points/s (${(pts.length / b.cpu / 1e6).toFixed(2)} per CPU s); ${a.value} of ${pts.length} in a region; target ≥ 1 M/s`,
    );
  }
  const M = 3000;
  let same = 0;
  const seq = timed(() => {
    for (let i = 0; i < M; i++) if (locateSequential(table.regions, pts[i]) === loc.locate(pts[i])) same++;
  });
  console.log(`  sequential scan: ${(M / seq.s / 1e3).toFixed(1)} k points/s; same region as the index on ${same}/${M}`);
}

/** A bank of m independent channels z_i = clamp(a_i·θ, l_i, u_i): the regions are the cells of 2m lines (invented). */
function arrangementProblem(m: number): unknown {
  let s = 7;
  const rnd = (): number => ((s = (Math.imul(s, 1103515245) + 12345) >>> 0) / 4294967296);
  const eye = (i: number, v: number) => Array.from({ length: m }, (_, j) => (i === j ? v : 0));
  const H: number[][] = [];
  const F: number[][] = [];
  const G: number[][] = [];
  const w: number[] = [];
  const E: number[][] = [];
  for (let i = 0; i < m; i++) {
    H.push(eye(i, 1));
    const ang = Math.PI * rnd();
    F.push([-Math.cos(ang), -Math.sin(ang)]);
    const c = (rnd() - 0.5) * 1.2;
    const half = 0.15 + 0.5 * rnd();
    G.push(eye(i, 1), eye(i, -1));
    w.push(c + half, -(c - half));
    E.push([0, 0], [0, 0]);
  }
  return { name: `channels-${m}`, description: 'bank of independent saturating channels (invented; a scaling bench)', mpqp: { H, F, G, w, E, outputs: 1 }, parameters: { lower: [-1, -1], upper: [1, 1] } };
}

function bigTable(): void {
  // cells of L lines in general position ≈ L²/2; about 0.6 of that count falls in the box here (measured at m = 24)
  const m = Math.max(20, Math.ceil(Math.sqrt((2 * bigRegions) / 0.6) / 2));
  const raw = arrangementProblem(m);
  const loaded = parseProblem(raw, 'generated');
  const out = mkdtempSync(join(tmpdir(), 'tessera-bigtable-'));
  const file = join(out, 'big.table.json');
  console.log(`\nbig table: ${m} channels (2-D θ, ${2 * m} rows), target ${bigRegions} regions or ${bigSeconds} s; start peak ${peakMb().toFixed(0)} MB`);
  try {
    const solved = timed(() => solveProblem(loaded, { lean: true, maxRegions: bigRegions, timeLimit: bigSeconds }));
    let table: TableFile = solved.value.table;
    const R = table.regions.length;
    console.log(`  solve (lean): ${R} regions, ${solved.s.toFixed(1)} s (${(R / solved.s).toFixed(0)} regions/s, ${solved.cpu.toFixed(1)} s CPU), stopped: ${table.stats.stopReason}; peak ${peakMb().toFixed(0)} MB`);
    const w = timed(() => writeTableFile(file, table));
    console.log(`  write (streamed): ${(statSync(file).size / 2 ** 20).toFixed(1)} MB, ${(statSync(file).size / R).toFixed(0)} B/region, ${w.s.toFixed(1)} s; peak ${peakMb().toFixed(0)} MB`);
    solved.value.partition.regions.length = 0;
    table = null as unknown as TableFile;
    const r = timed(() => readTableFile(file, { streamAbove: 0 }));
    table = r.value;
    console.log(`  read (streaming reader): ${r.s.toFixed(1)} s; peak ${peakMb().toFixed(0)} MB`);
    const pts = seededPoints(table, 1_000_000, 0xb16);
    const e = timed(() => {
      let f = 0;
      for (const p of pts) if (evaluateTable(table, p).region >= 0) f++;
      return f;
    });
    console.log(`  evaluate 10⁶ points (index built on the way): ${e.s.toFixed(1)} s, ${(pts.length / e.s / 1e6).toFixed(2)} M points/s, ${e.value} in a region; peak ${peakMb().toFixed(0)} MB`);
    const map = timed(() => drawMap(table, tableProblem(table), {}));
    console.log(`  map (SVG, whole box): ${(map.value.svg.length / 2 ** 20).toFixed(1)} MB of SVG, ${map.s.toFixed(1)} s; peak ${peakMb().toFixed(0)} MB`);
    const em = timed(() => emitC(table, { precision: 'double', search: 'boxtree', prefix: 'big' }));
    const bytes = em.value.files.reduce((s, f) => s + f.text.length, 0);
    console.log(`  emit (C double, box tree): ${(bytes / 2 ** 20).toFixed(1)} MB of source, ${em.s.toFixed(1)} s; peak ${peakMb().toFixed(0)} MB (target: ≤ 2048 MB throughout)`);
  } finally {
    rmSync(out, { recursive: true, force: true });
  }
}

export async function run(): Promise<void> {
  console.log(`load average ${loadavg().map((x) => x.toFixed(1)).join(' ')}`);
  sizes();
  evaluateBench();
  bigTable();
}
