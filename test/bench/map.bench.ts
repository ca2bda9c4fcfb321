/**
 * Timing of the slice and coverage machinery on the example problems: slice + classify + SVG
 * for one map, and the whole-box coverage check (Monte Carlo N = 20000, seed 1, plus facet probes).
 */
import { analyseCoverage, analyseSlice, makeSliceSpec, renderMapSvg } from '../../src/index.js';
import { exampleFiles, solved } from '../helpers/solved.js';

function time<T>(f: () => T, reps: number): { ms: number; out: T } {
  let out!: T;
  const t0 = performance.now();
  for (let k = 0; k < reps; k++) out = f();
  return { ms: (performance.now() - t0) / reps, out };
}

export async function run(): Promise<void> {
  console.log('map/gaps benchmark (ms per call, mean over repetitions; plain CPU)');
  console.log('problem                 nθ  regions  slice-polys  slice+classify  svg    coverage(N=20000)  holes');
  for (const file of exampleFiles) {
    const s = solved(file);
    const spec = makeSliceSpec(s.table.box, [0, 1]);
    const sl = time(() => analyseSlice(s.table, s.mpqp, spec), 5);
    const svg = time(() => renderMapSvg(s.table, sl.out), 5);
    const cov = time(() => analyseCoverage(s.table, s.mpqp, { samples: 20000, seed: 1 }), 1);
    console.log(
      `${s.table.name.padEnd(22)} ${String(s.table.dims.ntheta).padStart(3)} ${String(s.table.regions.length).padStart(8)} ${String(sl.out.polygons.length).padStart(12)} ${sl.ms.toFixed(1).padStart(15)} ${svg.ms.toFixed(1).padStart(6)} ${cov.ms.toFixed(0).padStart(18)} ${String(cov.out.holeWitnessCount).padStart(6)}`,
    );
  }
}

if (import.meta.url === `file://${process.argv[1]}`) void run();
