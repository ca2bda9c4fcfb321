/**
 * Large tables let each cost-model candidate's build go once it is measured and build the chosen one
 * again (MeasureOptions.releaseBuilds, on by default above RELEASE_BUILDS_ABOVE_BYTES of region
 * data). The printed C must not depend on it: the held path is itself checked against sequential
 * search, gcc and quadprog in locate.test.ts and certify.test.ts; here the released path must give
 * the same files byte for byte, and it must really hold no build but the chosen one.
 */
import { describe, expect, it } from 'vitest';
import { emitC } from '../../src/emit/index.js';
import { measureCandidates, regionDataBytes, RELEASE_BUILDS_ABOVE_BYTES } from '../../src/emit/choose.js';
import { cTarget } from '../../src/emit/targets/c.js';
import { EXAMPLES, exampleTable } from './helpers.js';

// the 4-D crane table is left out: its auto emit measures five structures in ~2 min, twice here
const CASES = EXAMPLES.filter((e) => e !== 'crane-trolley-4d.json').slice(0, 3);

describe('emit auto: releasing the candidates\' builds changes no byte', () => {
  for (const ex of CASES)
    for (const precision of ['float', 'double'] as const)
      it(`${ex}, ${precision}: same files, same pick, same figures`, () => {
        const table = exampleTable(ex).table;
        // the examples are far below the threshold: the default holds the builds
        expect(regionDataBytes(table)).toBeLessThan(RELEASE_BUILDS_ABOVE_BYTES);
        const held = emitC(table, { precision, search: 'auto', prefix: 'x' });
        const released = emitC(table, { precision, search: 'auto', prefix: 'x', locatorOptions: { releaseBuilds: true } });
        expect(released.search).toBe(held.search);
        expect(released.files.map((f) => f.name)).toEqual(held.files.map((f) => f.name));
        for (let i = 0; i < held.files.length; i++) expect(released.files[i].text).toBe(held.files[i].text);
        expect(released.cost).toEqual(held.cost);
        expect(released.candidates.map((c) => [c.search, c.cost, c.meanOps, c.rejected])).toEqual(held.candidates.map((c) => [c.search, c.cost, c.meanOps, c.rejected]));
        // only the chosen candidate holds a build after the pick
        expect(released.candidates.filter((c) => c.build !== null).map((c) => c.search)).toEqual([released.search]);
      }, 300000);

  it('measureCandidates with releaseBuilds keeps the figures and lets every build go', () => {
    const table = exampleTable(CASES[0]).table;
    const kinds = ['capped', 'broad', 'boxtree', 'grid', 'sequential'] as const;
    const held = measureCandidates(table, cTarget, 'float', kinds);
    const released = measureCandidates(table, cTarget, 'float', kinds, { releaseBuilds: true });
    expect(released.map((c) => [c.search, c.cost, c.location, c.meanLatency])).toEqual(held.map((c) => [c.search, c.cost, c.location, c.meanLatency]));
    expect(held.every((c) => c.build !== null)).toBe(true);
    expect(released.every((c) => c.build === null && c.locator === null)).toBe(true);
  }, 300000);
});
