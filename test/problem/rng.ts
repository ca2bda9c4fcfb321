/** Seeded generator (mulberry32) for reproducible random test data. */
export function rng(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

export function randMat(r: () => number, rows: number, cols: number, s = 1): number[][] {
  return Array.from({ length: rows }, () => Array.from({ length: cols }, () => s * (2 * r() - 1)));
}

/** M Mᵀ + shift·I: a random symmetric PSD (PD when shift > 0) matrix. */
export function randSpd(r: () => number, n: number, shift: number): number[][] {
  const M = randMat(r, n, n);
  return M.map((row, i) => M.map((col, j) => row.reduce((s, v, l) => s + v * col[l], 0) + (i === j ? shift : 0)));
}
