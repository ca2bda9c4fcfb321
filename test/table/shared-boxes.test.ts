import { describe, expect, it } from 'vitest';
import { BOX_BLOCK, boxJob, jobBoxes, workOnBoxes } from '../../src/table/shared-boxes.js';
import { indexToBytes } from '../../src/table/boxindex.js';
import { tableLocator } from '../../src/table/locator.js';
import { referenceBox } from '../helpers/lp-box.js';
import { arrangementTable } from '../emit/synthetic.js';

// References: javascript-lp-solver (an npm simplex, through the thin adapter lpMaximizeReference)
// maximising ±θ_j over each region's rows, for the boxes; for the index built on them, the bytes of
// the index one thread builds alone (the rule of the threaded build: the same tree whoever computed
// which box). A "thread" here is a caller of workOnBoxes: the job is plain shared memory and an atomic
// counter, so calls in turn take blocks as threads would.
describe('box LPs shared between threads (shared-boxes.ts)', () => {
  it('boxes from blocks taken in turn hold each region, as tight as the LP extent, and give the index of a single thread byte for byte', () => {
    const t = arrangementTable({ lower: [-1, -1, -1], upper: [1, 1, 1], planes: 11, seed: 43 });
    const n = t.dims.ntheta;
    expect(t.regions.length).toBeGreaterThan(3 * BOX_BLOCK);
    const pad = 1e-5;
    const job = boxJob(t.regions, n, pad);
    // in SharedArrayBuffers: what worker threads are sent without a copy
    expect(job.A.buffer).toBeInstanceOf(SharedArrayBuffer);
    expect(job.lo.buffer).toBeInstanceOf(SharedArrayBuffer);
    // a first taker does all blocks: a second finds none left
    expect(workOnBoxes(job)).toBe(Math.ceil(t.regions.length / BOX_BLOCK));
    expect(workOnBoxes(job)).toBe(0);
    const boxes = jobBoxes(job, t.box.lower, t.box.upper);
    t.regions.forEach((r, i) => {
      const ref = referenceBox(r.A, r.b);
      expect(ref.optimal).toBe(true);
      for (let j = 0; j < n; j++) {
        // padded by pad; the solver reports its optimum to ~1e-9
        expect(boxes[i].hi[j]).toBeGreaterThanOrEqual(ref.hi[j] + pad - 1e-8);
        expect(boxes[i].hi[j]).toBeLessThanOrEqual(ref.hi[j] + pad + 1e-7);
        expect(boxes[i].lo[j]).toBeLessThanOrEqual(ref.lo[j] - pad + 1e-8);
        expect(boxes[i].lo[j]).toBeGreaterThanOrEqual(ref.lo[j] - pad - 1e-7);
      }
    });
    const key = { table: 'test' };
    const alone = indexToBytes(tableLocator(t.regions, t.box.lower, t.box.upper), key);
    const shared = indexToBytes(tableLocator(t.regions, t.box.lower, t.box.upper, jobBoxes(boxJob(t.regions, n, 1e3 * 1e-8), t.box.lower, t.box.upper)), key);
    expect(Buffer.from(shared).equals(Buffer.from(alone))).toBe(true);
  });

  it('blocks handed out to a thread that has not marked them written (still on them, or ended) are computed by jobBoxes into its own arrays: the same index', () => {
    const t = arrangementTable({ lower: [-1, -1], upper: [1, 1], planes: 16, seed: 7 });
    const job = boxJob(t.regions, 2, 1e3 * 1e-8);
    const blocks = job.done.length;
    expect(blocks).toBeGreaterThan(2);
    // blocks 0 and 1 taken (the counter moved) by a thread that never wrote them
    Atomics.add(job.next, 0, 2);
    expect(workOnBoxes(job)).toBe(blocks - 2);
    expect([...job.done.subarray(0, 2)]).toEqual([0, 0]);
    // half-written by that thread: jobBoxes must not read these
    job.lo.fill(Number.NaN, 0, 2 * BOX_BLOCK * 2);
    job.hi.fill(-Infinity, 0, 2 * BOX_BLOCK * 2);
    const boxes = jobBoxes(job, t.box.lower, t.box.upper);
    expect([...job.done.subarray(0, 2)]).toEqual([0, 0]);
    const key = { table: 'test' };
    const alone = indexToBytes(tableLocator(t.regions, t.box.lower, t.box.upper), key);
    const shared = indexToBytes(tableLocator(t.regions, t.box.lower, t.box.upper, boxes), key);
    expect(Buffer.from(shared).equals(Buffer.from(alone))).toBe(true);
  });
});
