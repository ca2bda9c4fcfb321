import { describe, it, expect } from 'vitest';
import { Arena } from '../../src/util/arena.js';

// Reference: the ECMAScript typed-array semantics (a view's buffer, byteOffset and length, as the
// built-ins report them) and a plain Float64Array / Int32Array of the same length (zero-filled by
// the specification) holding the same writes.
describe('Arena with small blocks: zero-filled views that never overlap, a new block when one is full', () => {
  it('views of 64-byte blocks: disjoint, zero, each inside its buffer; a request above the block size gets a buffer of its own size', () => {
    const arena = new Arena(64);
    const made: (Float64Array | Int32Array)[] = [];
    const plain: (Float64Array | Int32Array)[] = [];
    for (let i = 0; i < 40; i++) {
      const n = (i * 7) % 6;
      const v = i % 2 ? arena.i32(n) : arena.f64(n);
      expect(v.length).toBe(n);
      for (let q = 0; q < n; q++) expect(v[q]).toBe(0);
      expect(v.byteOffset + v.byteLength).toBeLessThanOrEqual(v.buffer.byteLength);
      expect(v.byteOffset % v.BYTES_PER_ELEMENT).toBe(0);
      for (let q = 0; q < n; q++) v[q] = i * 10 + q;
      made.push(v);
      plain.push(i % 2 ? Int32Array.from(v) : Float64Array.from(v));
    }
    // every earlier view still holds its own writes: no two views share a byte
    made.forEach((v, i) => expect(Array.from(v)).toEqual(Array.from(plain[i])));
    const big = arena.f64(100);
    expect(big.length).toBe(100);
    expect(big.buffer.byteLength).toBe(800);
    expect(Array.from(big).every((x) => x === 0)).toBe(true);
  });
});
