import { describe, it, expect } from 'vitest';
import { sortRows } from '../../src/mpqp/pointqp.js';
import { rng } from '../problem/rng.js';

// Reference: the ECMAScript built-in Array.prototype.sort with the numeric comparator (x, y) => x − y.
describe('sortRows = Array.prototype.sort((x, y) => x − y) on row-index lists', () => {
  it('random lists (empty to 120 entries, repeats, already sorted, reversed), sorted in place', () => {
    const r = rng(4242);
    for (let t = 0; t < 300; t++) {
      const n = Math.floor(r() * 121);
      let a = Array.from({ length: n }, () => Math.floor(r() * 300));
      if (t % 3 === 1) a.sort((x, y) => x - y);
      if (t % 3 === 2) a = a.sort((x, y) => y - x);
      const ref = a.slice().sort((x, y) => x - y);
      const got = sortRows(a);
      expect(got).toBe(a);
      expect(got).toEqual(ref);
    }
  });
});
