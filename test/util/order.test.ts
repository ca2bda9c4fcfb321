import { describe, it, expect } from 'vitest';
import { sortedOrder } from '../../src/util/order.js';

// The reference is ECMAScript's own Array.prototype.sort, stable since ES2019 (the spec requires
// it), with the comparator the canonical form used before: by key, ties in index order.
const reference = (keys: Float64Array): number[] => Array.from(keys.keys()).sort((x, y) => keys[x] - keys[y] || x - y);

/** xorshift32 (Marsaglia 2003, from memory): a fixed sequence, so every run tests the same keys */
function rng(seed: number): () => number {
  let s = seed >>> 0 || 1;
  return () => {
    s ^= s << 13;
    s >>>= 0;
    s ^= s >>> 17;
    s ^= s << 5;
    s >>>= 0;
    return s / 2 ** 32;
  };
}

describe('sortedOrder: the stable ascending permutation of a Float64Array', () => {
  it('equals Array.prototype.sort with (key, index) on keys with many ties, both signs, ±0, ±Infinity, subnormals and huge values', () => {
    const r = rng(12345);
    for (const n of [0, 1, 2, 17, 1000, 70_000]) {
      const keys = new Float64Array(n);
      for (let i = 0; i < n; i++) {
        const u = r();
        keys[i] =
          u < 0.3 ? Math.round((r() - 0.5) * 40) / 8 // few distinct values: long runs of ties
          : u < 0.35 ? (r() < 0.5 ? 0 : -0)
          : u < 0.37 ? (r() < 0.5 ? Infinity : -Infinity)
          : u < 0.4 ? (r() - 0.5) * 1e-310 // subnormal
          : u < 0.43 ? (r() - 0.5) * 1e300
          : (r() - 0.5) * 2 ** (Math.floor(r() * 60) - 30);
      }
      expect(Array.from(sortedOrder(keys))).toEqual(reference(keys));
    }
  });

  it('keeps index order among equal keys, and −0 ties with +0 (as a − b = 0 says)', () => {
    const keys = Float64Array.from([1, -0, 0, -1, 0, -0, 1, -1]);
    // hand-sorted: −1 at 3, 7; the zeros at 1, 2, 4, 5 in index order; 1 at 0, 6
    expect(Array.from(sortedOrder(keys))).toEqual([3, 7, 1, 2, 4, 5, 0, 6]);
  });
});
