/** Seeded sampling of the parameter box, shared by the certificate, the self-test and the benchmark. */

/** mulberry32: a small 32-bit PRNG, enough for reproducible test points (not for cryptography). */
export function seededRandom(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** `count` points drawn uniformly in the box [lower, upper], reproducible from `seed`. */
export function sampleBox(box: { lower: ArrayLike<number>; upper: ArrayLike<number> }, count: number, seed: number): number[][] {
  const rnd = seededRandom(seed);
  const n = box.lower.length;
  const out: number[][] = [];
  for (let i = 0; i < count; i++) {
    const p = new Array<number>(n);
    for (let j = 0; j < n; j++) p[j] = box.lower[j] + (box.upper[j] - box.lower[j]) * rnd();
    out.push(p);
  }
  return out;
}
