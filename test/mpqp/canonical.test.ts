import { describe, it, expect } from 'vitest';
import { basename } from 'node:path';
import { exampleFiles, fixtureFiles, solved, rng, randomInBox } from '../helpers/solved.js';
import { qpReference } from '../helpers/reference.js';
import { solvePartition } from '../../src/mpqp/solve.js';
import { beginJoin, buildGuesses, canonicalNeighbours, joinPartitions, mergeNeighbours, subBox, type GuessHints } from '../../src/mpqp/canonical.js';
import { makeTable } from '../../src/table/build.js';
import { tableToJson } from '../../src/table/table.js';
import { evaluateTable } from '../../src/table/table.js';
import { formulate } from '../../src/formulation/index.js';
import { parseProblem, solveProblem } from '../../src/index.js';
import type { CriticalRegion } from '../../src/mpqp/types.js';
import { canonicalThreaded, exploreThreaded, startThreadPool } from '../../src/table/threads.js';

const files = [...exampleFiles, ...fixtureFiles];

describe('canonical form: the same bytes however the exploration is split', () => {
  for (const file of files) {
    it(`${basename(file)}: k sub-box parts joined = the single exploration, and the law agrees with quadprog`, () => {
      const { loaded, table } = solved(file);
      const formulation = formulate(loaded);
      const { mpqp } = formulation;
      const single = tableToJson(table);
      for (const k of [2, 3]) {
        const parts = Array.from({ length: k }, (_, i) => solvePartition(mpqp, { within: subBox(mpqp.box, i, k) }));
        // every part is smaller than the whole and finds only regions meeting its sub-box
        for (const p of parts) expect(p.stats.complete).toBe(true);
        const joined = tableToJson(makeTable(loaded, formulation, joinPartitions(mpqp, parts)));
        expect(joined === single, `${k} parts joined differ from the single exploration`).toBe(true);
      }
      // the joined (= canonical) table against quadprog (Goldfarb–Idnani, an independent QP solver)
      const rnd = rng(777 + basename(file).length);
      for (let n = 0; n < 300; n++) {
        const th = randomInBox(mpqp.box, rnd);
        const ref = qpReference(mpqp, th);
        const e = evaluateTable(table, th);
        expect(e.region >= 0, `θ=${th}`).toBe(ref.feasible);
        if (ref.feasible) for (let i = 0; i < mpqp.lawSize; i++) expect(Math.abs(e.u![i] - ref.z[i])).toBeLessThan(1e-6 * (1 + Math.abs(ref.z[i])));
      }
    }, 300_000);
  }
});

describe('canonical form: the same bytes on 2 threads', () => {
  // the 2-thread table is the single-thread table byte for byte, which agrees with quadprog (above)
  for (const file of files) {
    it(`${basename(file)}: 2 worker threads on 2 sub-boxes = 1 thread`, async () => {
      const { loaded, table } = solved(file);
      const formulation = formulate(loaded);
      const p = await exploreThreaded(formulation.mpqp, { threads: 2 }).result;
      expect(p.stats.complete).toBe(true);
      const bytes = tableToJson(makeTable(loaded, formulation, joinPartitions(formulation.mpqp, [p])));
      expect(bytes === tableToJson(table), '2 threads differ from 1').toBe(true);
    }, 300_000);
  }
});

describe('canonical form: twin facets hinted by the workers', () => {
  // the workers pair the twin facets among their own regions (`twinPairs`) and the neighbours step
  // takes those pairs as hints; with twins sought from clusters of 4 facets in the workers and 8 in
  // the neighbours step (the defaults seek them only in planes of 512+ facets, which no example
  // has), the table must still be the single-thread table byte for byte (checked against quadprog
  // in the first block above)
  // examples and fixtures of 3- and 4-D θ whose sub-boxes hold twins in clusters of 4+ facets
  // (greenhouse-offset-free, valve-actuator and disturbance-feedforward hold none)
  for (const file of files.filter((f) => /hoist|thermal|tracking-rate|two-carts/.test(f))) {
    it(`${basename(file)}: 2 threads with twin hints = 1 thread without`, async () => {
      const { loaded, table } = solved(file);
      const formulation = formulate(loaded);
      const { mpqp } = formulation;
      expect(mpqp.ntheta).toBeGreaterThanOrEqual(3);
      const pool = startThreadPool(2);
      try {
        const run = exploreThreaded(mpqp, { threads: 2, guesses: true, twinsFrom: 4, pool });
        const p = await run.result;
        expect(p.stats.complete).toBe(true);
        const hints = run.guesses();
        expect(hints.twins?.keys.length ?? 0).toBeGreaterThan(0);
        const hinted = await canonicalThreaded(mpqp, p, 2, { guesses: hints, twinsFrom: 8 }, pool);
        expect(hinted.neighbourWork?.twins ?? 0).toBeGreaterThan(0);
        const bytes = tableToJson(makeTable(loaded, formulation, hinted));
        expect(bytes === tableToJson(table), '2 threads with twin hints differ from 1 thread').toBe(true);
        // the same twins without hints (each found from its vertex lists here)
        const plain = joinPartitions(mpqp, [p], { twinsFrom: 8 });
        expect(plain.neighbourWork?.twins).toBe(hinted.neighbourWork?.twins);
      } finally {
        await pool.terminate();
      }
    }, 300_000);
  }
});

describe('threads: the sub-boxes run at the same time', () => {
  // each worker of the pool takes one sub-box at once (a bug once started only the first worker,
  // which then explored the sub-boxes one after the other); the jobs handed out are recorded from
  // the workers' postMessage, and the second job must start before the first one ends
  it('a pool of 2 gets one explore job per worker, the second before the first is done', async () => {
    const file = files.find((f) => /thermal/.test(f))!;
    const { loaded, table } = solved(file);
    const formulation = formulate(loaded);
    const pool = startThreadPool(2);
    const jobs: { worker: number; job: number }[] = [];
    const doneAt: number[] = [];
    try {
      pool.workers.forEach((w, i) => {
        const post = w.postMessage.bind(w);
        w.postMessage = (m: unknown, ...rest: never[]) => {
          if ((m as { kind?: string }).kind === 'explore') jobs.push({ worker: i, job: (m as { job: number }).job });
          post(m, ...rest);
        };
        w.on('message', (msg: { type?: string }) => {
          if (msg.type === 'done') doneAt.push(jobs.length);
        });
      });
      const p = await exploreThreaded(formulation.mpqp, { threads: 2, pool }).result;
      expect(p.stats.complete).toBe(true);
      expect(jobs.map((j) => j.worker).sort()).toEqual([0, 1]);
      expect(jobs.map((j) => j.job).sort()).toEqual([0, 1]);
      // when the first job ended, both had been handed out
      expect(doneAt[0]).toBe(2);
      // and the table is the single thread's, byte for byte (that one agrees with quadprog, above)
      const bytes = tableToJson(makeTable(loaded, formulation, joinPartitions(formulation.mpqp, [p])));
      expect(bytes === tableToJson(table)).toBe(true);
    } finally {
      await pool.terminate();
    }
  }, 300_000);
});

describe('closure guesses built ahead by the exploring threads (hints)', () => {
  // The closure step may add thin regions (radius ≤ 10·tol.radius) that an exploration can miss;
  // its guesses can be built in the exploring workers (`buildGuesses`) and handed to the join as
  // hints. The hints must change nothing: the joined table is the single exploration's bytes
  // (that table agrees with quadprog, above), with all, some or none of the hints. two-carts-4d is
  // the file whose closure adds regions (2): there the hinted thin regions themselves are checked
  // against quadprog (Goldfarb–Idnani) at their Chebyshev centres.
  for (const file of files.filter((f) => /two-carts|thermal|valve|licq/.test(f))) {
    it(`${basename(file)}: joined with the parts' guess hints = without = the single exploration`, () => {
      const { loaded, table } = solved(file);
      const formulation = formulate(loaded);
      const { mpqp } = formulation;
      const single = tableToJson(table);
      const parts = [0, 1].map((i) => solvePartition(mpqp, { within: subBox(mpqp.box, i, 2) }));
      // merged as exploreThreaded merges the workers' answers
      const hints: GuessHints = { lean: false, tried: new Set(), thin: new Map() };
      for (const p of parts) {
        const g = buildGuesses(mpqp, p.regions, false, { lps: 0, reference: false });
        for (const k of g.tried) hints.tried.add(k);
        for (const t of g.thin) if (!hints.thin.has(t.key)) hints.thin.set(t.key, { region: t.region, box: t.box });
      }
      expect(hints.tried.size).toBeGreaterThan(0);
      const bytes = (guesses?: GuessHints) => tableToJson(makeTable(loaded, formulation, joinPartitions(mpqp, parts, { guesses })));
      expect(bytes(hints) === single, 'with every hint').toBe(true);
      expect(bytes() === single, 'without hints').toBe(true);
      // half the keys hinted: the others are built by the join itself
      const some: GuessHints = { lean: false, tried: new Set([...hints.tried].filter((_, i) => i % 2 === 0)), thin: hints.thin };
      expect(bytes(some) === single, 'with half the hints').toBe(true);
      // hints built lean do not apply to full regions (they are ignored, not used)
      expect(bytes({ ...hints, lean: true, thin: new Map() }) === single, 'lean hints on a full join').toBe(true);
      if (/two-carts/.test(file)) {
        expect(hints.thin.size).toBeGreaterThan(0);
        for (const [key, { region }] of hints.thin) {
          // the thin region is one the canonical table holds, and its law is quadprog's optimum at its centre
          expect(table.regions.some((R) => R.activeSet.join(',') === key), key).toBe(true);
          const th = Array.from(region.chebyshev.center);
          const ref = qpReference(mpqp, th);
          expect(ref.feasible).toBe(true);
          for (let i = 0; i < mpqp.lawSize; i++) {
            let u = region.law.g[i];
            for (let j = 0; j < mpqp.ntheta; j++) u += region.law.F[i][j] * th[j];
            expect(Math.abs(u - ref.z[i])).toBeLessThan(1e-6 * (1 + Math.abs(ref.z[i])));
          }
        }
      }
    }, 300_000);
  }
});

describe('canonical neighbours computed in shares (threads)', () => {
  // the neighbour lists of 2 or 3 shares merged are those computed at once: every pair of facets is
  // tested in exactly one cluster, whichever share does it (an invariance check; the lists' own
  // correctness is checked below against regions sharing a piece of a facet)
  for (const file of files.filter((f) => /crane|two-carts|thermal|positioning/.test(f))) {
    it(`${basename(file)}: shares merged = computed at once; canonicalThreaded = joinPartitions`, async () => {
      const { loaded } = solved(file);
      const { mpqp } = formulate(loaded);
      const p = solvePartition(mpqp);
      const join = beginJoin(mpqp, [p]);
      const whole = canonicalNeighbours(mpqp, join.regions, join.boxes, join.lp);
      for (const count of [2, 3]) {
        const shares = Array.from({ length: count }, (_, index) => canonicalNeighbours(mpqp, join.regions, join.boxes, join.lp, undefined, { index, count }));
        expect(mergeNeighbours(shares)).toEqual(whole);
      }
      const at2 = await canonicalThreaded(mpqp, p, 2, { workerShares: true });
      const joined = JSON.stringify(joinPartitions(mpqp, [p]).regions);
      expect(JSON.stringify(at2.regions) === joined).toBe(true);
      // with a pool: its warm workers take the shares (a pool of one leaves the step to this thread)
      for (const n of [1, 2]) {
        const pool = startThreadPool(n);
        try {
          const onPool = await canonicalThreaded(mpqp, p, n, { workerShares: true }, pool);
          expect(JSON.stringify(onPool.regions) === joined, `pool of ${n}`).toBe(true);
          // the default: the calling thread alone, the pool left idle
          const alone = await canonicalThreaded(mpqp, p, n, {}, pool);
          expect(JSON.stringify(alone.regions) === joined, `pool of ${n}, this thread`).toBe(true);
        } finally {
          await pool.terminate();
        }
      }
    }, 300_000);
  }
});

describe('canonical order and neighbours', () => {
  it('regions are sorted by active set and numbered in that order', () => {
    for (const file of files) {
      const { table } = solved(file);
      table.regions.forEach((R, i) => {
        expect(R.id).toBe(i);
        if (i === 0) return;
        const a = table.regions[i - 1].activeSet;
        const b = R.activeSet;
        // lexicographic on the index lists, a prefix first (common practice for sorting tuples)
        const cmp = a.map((x, j) => (j < b.length ? x - b[j] : 1)).find((d) => d !== 0) ?? a.length - b.length;
        expect(cmp, `${basename(file)} regions ${i - 1}, ${i}`).toBeLessThan(0);
      });
    }
  });

  // Reference, written out here for 2-D θ: two cells of a polyhedral partition are neighbours across
  // a facet when they share a 1-D piece of it (common practice). The facet's segment is clipped
  // exactly by each other region's half-planes; pieces within a factor 2 of the 2·10⁻⁶ threshold
  // are not judged.
  it('2-D: the listed neighbours of every facet are exactly the regions sharing a piece of it', () => {
    let judged = 0;
    for (const file of files) {
      const { table } = solved(file);
      if (table.dims.ntheta !== 2) continue;
      const regs = table.regions;
      regs.forEach((R, r) =>
        R.facets.forEach((f, q) => {
          if (f.kind === 'box') return;
          const seg = segmentOf(R, q, R);
          if (!seg) return;
          for (let s = 0; s < regs.length; s++) {
            if (s === r) continue;
            const len = clipLength(seg, regs[s]);
            const listed = f.neighbours.includes(s);
            if (len > 4e-6) {
              judged++;
              expect(listed, `${basename(file)} region ${r} facet ${q}: region ${s} shares ${len}`).toBe(true);
            } else if (len < 1e-6) expect(listed, `${basename(file)} region ${r} facet ${q}: region ${s} shares only ${len}`).toBe(false);
          }
        }),
      );
    }
    expect(judged).toBeGreaterThan(100);
  });
});

describe('canonical neighbours where many facets share one line', () => {
  // A bank of 22 independent saturating channels over a 2-D θ (invented): the regions are the
  // cells of an arrangement of 44 lines, so up to ~70 facets lie on one line — the clusters that
  // canonicalNeighbours sweeps along an axis instead of comparing pair by pair. Reference: exact
  // clipping of facet segments, written out below (common practice).
  it('2-D arrangement: the listed neighbours of every facet are exactly the regions sharing a piece of it', () => {
    const m = 22;
    const rnd = rng(515);
    const eye = (i: number, v: number) => Array.from({ length: m }, (_, j) => (i === j ? v : 0));
    const H: number[][] = [];
    const F: number[][] = [];
    const G: number[][] = [];
    const w: number[] = [];
    const E: number[][] = [];
    for (let i = 0; i < m; i++) {
      H.push(eye(i, 1));
      const ang = Math.PI * rnd();
      F.push([-Math.cos(ang), -Math.sin(ang)]);
      const c = (rnd() - 0.5) * 1.2;
      const half = 0.15 + 0.5 * rnd();
      G.push(eye(i, 1), eye(i, -1));
      w.push(c + half, -(c - half));
      E.push([0, 0], [0, 0]);
    }
    const raw = { name: 'channels', mpqp: { H, F, G, w, E, outputs: 1 }, parameters: { lower: [-1, -1], upper: [1, 1] } };
    const table = solveProblem(parseProblem(raw, 'channels.json')).table;
    const regs = table.regions;
    // facets per line (rows rounded, orientation removed): the largest clusters pass 64
    const perLine = new Map<string, number>();
    for (const R of regs)
      R.facets.forEach((f, q) => {
        if (f.kind === 'box') return;
        const sg = R.A[q][0] < 0 || (R.A[q][0] === 0 && R.A[q][1] < 0) ? -1 : 1;
        const key = [R.A[q][0] * sg, R.A[q][1] * sg, R.b[q] * sg].map((x) => x.toFixed(5)).join(',');
        perLine.set(key, (perLine.get(key) ?? 0) + 1);
      });
    expect(Math.max(...perLine.values())).toBeGreaterThan(64);
    let judged = 0;
    // every third region's facets against every region (the literal check is quadratic)
    regs.forEach((R, r) =>
      R.facets.forEach((f, q) => {
        if (f.kind === 'box' || r % 3 !== 0) return;
        const seg = segmentOf(R, q, R);
        if (!seg) return;
        for (let s = 0; s < regs.length; s++) {
          if (s === r) continue;
          const len = clipLength(seg, regs[s]);
          const listed = f.neighbours.includes(s);
          if (len > 4e-6) {
            judged++;
            expect(listed, `region ${r} facet ${q}: region ${s} shares ${len}`).toBe(true);
          } else if (len < 1e-6) expect(listed, `region ${r} facet ${q}: region ${s} shares only ${len}`).toBe(false);
        }
      }),
    );
    expect(judged).toBeGreaterThan(500);
  });
});

type Seg = { p: [number, number]; d: [number, number]; t0: number; t1: number };

/** The facet q of R as a segment p + t d, t ∈ [t0, t1], clipped by R's other rows. */
function segmentOf(R: CriticalRegion, q: number, _self: CriticalRegion): Seg | null {
  const [a0, a1] = R.A[q];
  const p: [number, number] = [a0 * R.b[q], a1 * R.b[q]];
  const d: [number, number] = [-a1, a0];
  let t0 = -Infinity;
  let t1 = Infinity;
  R.A.forEach((row, i) => {
    if (i === q) return;
    const ad = row[0] * d[0] + row[1] * d[1];
    const rest = R.b[i] - (row[0] * p[0] + row[1] * p[1]);
    if (Math.abs(ad) < 1e-12) return;
    if (ad > 0) t1 = Math.min(t1, rest / ad);
    else t0 = Math.max(t0, rest / ad);
  });
  return t1 > t0 ? { p, d, t0, t1 } : null;
}

/**
 * Length of the part of the segment inside S, S's rows with a slack of 1e-9 (rounding): a shared
 * edge counts, a neighbour that only touches a vertex at a small angle does not (a larger slack
 * would count the sliver within it, 1e-7 over an angle α is 1e-7/α long).
 */
function clipLength(seg: Seg, S: CriticalRegion): number {
  let t0 = seg.t0;
  let t1 = seg.t1;
  for (let i = 0; i < S.A.length; i++) {
    const row = S.A[i];
    const ad = row[0] * seg.d[0] + row[1] * seg.d[1];
    const rest = S.b[i] + 1e-9 - (row[0] * seg.p[0] + row[1] * seg.p[1]);
    if (Math.abs(ad) < 1e-9) {
      if (rest < 0) return 0;
      continue;
    }
    if (ad > 0) t1 = Math.min(t1, rest / ad);
    else t0 = Math.max(t0, rest / ad);
  }
  return Math.max(0, t1 - t0);
}

describe('canonical form under a time limit', () => {
  // a bounded result is marked incomplete everywhere it goes (common practice for bounded solvers:
  // a stop is reported, never a silently shorter answer)
  it('a closure step cut short by shouldStop marks the result incomplete (time-limit) and keeps every explored region; progress is reported', () => {
    const file = exampleFiles.find((f) => basename(f).startsWith('positioning-axis'))!;
    const { loaded } = solved(file);
    const { mpqp } = formulate(loaded);
    const p = solvePartition(mpqp);
    expect(p.stats.complete).toBe(true);
    const steps = new Set<string>();
    const whole = joinPartitions(mpqp, [p], { onProgress: (step, done, total) => { expect(done).toBeLessThanOrEqual(total); steps.add(step); } });
    expect(whole.stats.complete).toBe(true);
    expect(steps.has('closing')).toBe(true); // the first call is never throttled
    const cut = joinPartitions(mpqp, [p], { shouldStop: () => true });
    expect(cut.stats.complete).toBe(false);
    expect(cut.stats.stopReason).toBe('time-limit');
    // nothing the exploration found is dropped: the cut result holds every explored active set
    const keys = new Set(cut.regions.map((R) => R.activeSet.join(',')));
    for (const R of p.regions) expect(keys.has(R.activeSet.join(','))).toBe(true);
    // not stopped: the same regions as without options
    const again = joinPartitions(mpqp, [p], { shouldStop: () => false });
    expect(JSON.stringify(again.regions)).toBe(JSON.stringify(whole.regions));
  }, 120_000);
});
