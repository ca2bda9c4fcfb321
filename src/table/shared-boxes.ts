/**
 * The bounding boxes of a table's regions (`regionBoundingBox`, the LP part of building the k-d tree
 * `tableLocator` makes) computed by several threads at once: the rows packed into shared memory,
 * blocks of regions handed out by an atomic counter, each box written where every thread reads it.
 * A box depends only on its region's rows, centre and the padding, and every thread runs the same
 * steps on the same doubles (`packedBoundingBox`), so the boxes, and the tree built on them, are the
 * ones a single thread makes, whichever thread computed which block. No `node:*` import: the caller
 * moves the job between threads (src/table/evaluate-threads.ts).
 */
import type { CriticalRegion } from '../mpqp/types.js';
import { packedBoundingBox } from './locator.js';

/** Regions per block handed out (small enough for the threads to end together, large enough that the counter is cheap). */
export const BOX_BLOCK = 32;

/** A table's boxes to compute: rows, centres and the results in (shared) typed arrays; `next` counts the blocks handed out, `done[k]` marks block k written. */
export interface BoxJob {
  n: number;
  regions: number;
  pad: number;
  A: Float64Array;
  b: Float64Array;
  rowStart: Int32Array;
  /** region r's interior point (Chebyshev centre) at r·n, when hasCentre[r] */
  centre: Float64Array;
  hasCentre: Uint8Array;
  lo: Float64Array;
  hi: Float64Array;
  next: Int32Array;
  done: Uint8Array;
}

/** The job for `regions` (nθ = n) in memory that worker threads can share (SharedArrayBuffer), nothing computed yet. */
export function boxJob(regions: readonly Pick<CriticalRegion, 'A' | 'b' | 'chebyshev'>[], n: number, pad: number): BoxJob {
  const R = regions.length;
  let rows = 0;
  for (const r of regions) rows += r.b.length;
  const f64 = (k: number): Float64Array => new Float64Array(new SharedArrayBuffer(8 * Math.max(k, 1)), 0, k);
  const A = f64(rows * n);
  const b = f64(rows);
  const rowStart = new Int32Array(new SharedArrayBuffer(4 * (R + 1)));
  const centre = f64(R * n);
  const hasCentre = new Uint8Array(new SharedArrayBuffer(Math.max(R, 1)), 0, R);
  let at = 0;
  for (let r = 0; r < R; r++) {
    const reg = regions[r];
    rowStart[r] = at;
    for (let i = 0; i < reg.b.length; i++, at++) {
      const row = reg.A[i];
      for (let j = 0; j < n; j++) A[at * n + j] = row[j];
      b[at] = reg.b[i];
    }
    const c = reg.chebyshev?.center;
    if (c) {
      hasCentre[r] = 1;
      for (let j = 0; j < n; j++) centre[r * n + j] = c[j];
    }
  }
  rowStart[R] = at;
  const blocks = Math.ceil(R / BOX_BLOCK);
  return { n, regions: R, pad, A, b, rowStart, centre, hasCentre, lo: f64(R * n), hi: f64(R * n), next: new Int32Array(new SharedArrayBuffer(4)), done: new Uint8Array(new SharedArrayBuffer(Math.max(blocks, 1)), 0, blocks) };
}

/** Box of block k's regions into lo/hi (those with rows; a region without rows is left to `jobBoxes`). */
function boxBlock(job: BoxJob, k: number, lo: Float64Array, hi: Float64Array): void {
  const { n, A, b, rowStart, centre, hasCentre, pad } = job;
  const end = Math.min(job.regions, (k + 1) * BOX_BLOCK);
  for (let r = k * BOX_BLOCK; r < end; r++) {
    const i0 = rowStart[r];
    const m = rowStart[r + 1] - i0;
    if (m === 0) continue;
    packedBoundingBox(A.subarray(i0 * n, (i0 + m) * n), b.subarray(i0, i0 + m), m, n, hasCentre[r] ? centre.subarray(r * n, r * n + n) : null, pad, lo.subarray(r * n, r * n + n), hi.subarray(r * n, r * n + n));
  }
}

/** Take blocks of the job until none is left to hand out (any thread, any number at once), each written to the shared arrays and then marked; the number of blocks this call computed. */
export function workOnBoxes(job: BoxJob): number {
  const blocks = job.done.length;
  let count = 0;
  for (let k = Atomics.add(job.next, 0, 1); k < blocks; k = Atomics.add(job.next, 0, 1)) {
    boxBlock(job, k, job.lo, job.hi);
    // the block's boxes written, then the mark (an atomic store: a thread that reads the mark reads them)
    Atomics.store(job.done, k, 1);
    count++;
  }
  return count;
}

/**
 * The boxes, without waiting for any other thread: the blocks still to hand out are taken here, and a
 * block another thread took but has not marked written (still on it, or ended) is computed again here
 * into this thread's own arrays (the same values; the shared ones may be half written). In region
 * order, as `tableLocator` takes them: a region without rows gets the parameter box.
 */
export function jobBoxes(job: BoxJob, lower: ArrayLike<number>, upper: ArrayLike<number>): { lo: ArrayLike<number>; hi: ArrayLike<number> }[] {
  workOnBoxes(job);
  const { n, rowStart } = job;
  const blocks = job.done.length;
  const mine = new Uint8Array(blocks);
  let lo2: Float64Array | null = null;
  let hi2: Float64Array | null = null;
  for (let k = 0; k < blocks; k++)
    if (!Atomics.load(job.done, k)) {
      lo2 ??= new Float64Array(job.regions * n);
      hi2 ??= new Float64Array(job.regions * n);
      boxBlock(job, k, lo2, hi2);
      mine[k] = 1;
    }
  const out: { lo: ArrayLike<number>; hi: ArrayLike<number> }[] = [];
  for (let r = 0; r < job.regions; r++) {
    const own = mine[Math.floor(r / BOX_BLOCK)] === 1;
    const lo = own ? lo2! : job.lo;
    const hi = own ? hi2! : job.hi;
    out.push(rowStart[r + 1] === rowStart[r] ? { lo: lower, hi: upper } : { lo: lo.subarray(r * n, r * n + n), hi: hi.subarray(r * n, r * n + n) });
  }
  return out;
}
