/**
 * The latency model's inputs (meanProfile: descent passes, candidate regions tested, region rows
 * tested) against the generated C itself: the C of every structure is instrumented with counters (one
 * increment per pass of its descent loop, per region test, per row of a region test), compiled with
 * gcc and run on the same points; the means must be equal. The generated code run by gcc is the
 * reference, not the TypeScript walk. The pick rule: auto takes the fewest latency-weighted operations among the
 * admissible structures within the worst-case factor (checked from the report's own figures).
 */
import { describe, expect, it } from 'vitest';
import { emitC } from '../../src/emit/index.js';
import { meanProfile } from '../../src/emit/arrays.js';
import { meanLatency, LATENCY_WEIGHTS, pickCandidate, WORST_CASE_FACTOR, worstOps } from '../../src/emit/choose.js';
import { formatReal } from '../../src/emit/targets/c.js';
import { sampleBox } from '../../src/emit/sample.js';
import type { TableFile } from '../../src/table/format.js';
import { compile, exampleTable, run } from './helpers.js';
import { arrangementTable } from './synthetic.js';

/** The generated source with counters at the top of the region test, of each row and of each descent pass. */
function instrument(source: string): string {
  let s = source.replace('#include "law.h"\n', '#include "law.h"\nstatic unsigned long lat_rows, lat_candidates, lat_passes;\n');
  const before = s;
  s = s.replace(/(static int law_(?:fit|inside)\(uint32_t r, [^)]*\)\n\{\n)/, '$1    ++lat_candidates;\n');
  expect(s).not.toBe(before);
  const rows = s.match(/for \(i = [^;]+; i < end; \+\+i\) \{/g) ?? [];
  expect(rows.length).toBe(1);
  s = s.replace(/(for \(i = [^;]+; i < end; \+\+i\) \{)/, '$1\n        ++lat_rows;');
  s = s.replace(/(for \(d = \d+u; d < LAW_DEPTH && ref >= 0; [^)]+\) \{)/, '$1\n        ++lat_passes;');
  // the head of a plane descent (capped, broad) counts as one pass
  s = s.replace(/(\n {8}uint32_t h_ = 0u;)/, '$1\n        ++lat_passes;');
  return s;
}

function checkProfile(name: string, table: TableFile): void {
  describe(name, () => {
    const points = sampleBox(table.box, 1500, 77);
    for (const search of ['capped', 'broad', 'boxtree', 'grid', 'sequential'] as const)
      for (const precision of ['float', 'double'] as const)
        it(`${search}, ${precision}: passes, candidates and rows as the compiled C counts them`, () => {
          const r = emitC(table, { precision, search, prefix: 'law' });
          const ar = r.arrays;
          const n = ar.ntheta;
          const flat = points.flatMap((p) => p.map((v) => formatReal(precision === 'float' ? Math.fround(v) : v, precision)));
          const main = `#include <stdio.h>
#include "law.c"
static const ${precision} pts[${flat.length}] = {${flat.join(',')}};
int main(void)
{
    unsigned k;
    for (k = 0u; k < ${points.length}u; ++k) {
        ${precision} u[LAW_NU];
        (void)law_eval(&pts[k * LAW_NT], u);
    }
    printf("%lu %lu %lu\\n", lat_passes, lat_candidates, lat_rows);
    return 0;
}
`;
          const { exe } = compile('latency', { 'law.h': r.header, 'law.c': instrument(r.source), 'main.c': main }, ['main.c']);
          const [passes, candidates, rows] = run(exe).stdout.trim().split(' ').map(Number);
          const p = meanProfile(ar, table.box, 0, points);
          expect(p.candidates * points.length).toBeCloseTo(candidates, 6);
          expect(p.rows * points.length).toBeCloseTo(rows, 6);
          // the grid's cell has no loop: counted as one pass per lookup by the profile
          if (search === 'grid') expect(p.passes).toBe(1);
          else expect(p.passes * points.length).toBeCloseTo(passes, 6);
          if (search === 'boxtree') expect(p.levels).toBe(p.passes);
          if (search === 'sequential') expect(p.passes).toBe(0);
          expect(n).toBe(table.dims.ntheta);
        });
  });
}

checkProfile('example buck-duty-cycle', exampleTable('buck-duty-cycle.json').table);
checkProfile('synthetic 4-D arrangement', arrangementTable({ lower: [-1, -1, -1, -1], upper: [1, 1, 1, 1], planes: 9, seed: 5 }));

describe('latency model and the pick', () => {
  it('adds a weight per descent pass and per candidate to the operations', () => {
    const base = { operations: 200, passes: 3, levels: 6, candidates: 2, rows: 20, found: 1 };
    expect(meanLatency(base, 5)).toBe(200 + LATENCY_WEIGHTS.pass * 7 * 3 + LATENCY_WEIGHTS.candidate * 2);
    // the point of the model: a pass weighs more than its operations alone (3 planes of nθ + 1 in 5-D)
    expect(LATENCY_WEIGHTS.pass * 7).toBeGreaterThan(3 * 6);
  });

  it('auto takes the fewest latency-weighted operations among admissible structures within the worst-case factor', () => {
    const table = arrangementTable({ lower: [-1, -1, -1], upper: [1, 1, 1], planes: 8, seed: 3 });
    const r = emitC(table, { precision: 'float', search: 'auto', prefix: 'law' });
    const ok = r.candidates.filter((c) => !c.rejected && c.cost);
    const least = Math.min(...ok.map(worstOps));
    const near = ok.filter((c) => worstOps(c) <= WORST_CASE_FACTOR * least);
    const chosen = r.candidates.find((c) => c.search === r.search)!;
    for (const c of near) expect(chosen.meanLatency!).toBeLessThanOrEqual(c.meanLatency!);
    expect(pickCandidate(r.candidates).chosen.search).toBe(r.search);
    expect(r.header).toContain('latency-weighted');
  });
});
