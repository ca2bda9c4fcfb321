/**
 * The exploration on several threads (Node only: worker_threads), by sub-boxes.
 *
 * The box explored (the whole parameter box, or the sub-box of `--part`) is cut into as many
 * sub-boxes as there are threads (`subBox`: recursive bisection across the widest axis), and every
 * worker explores sub-boxes on its own (`solvePartition` with `within`), with no communication
 * between workers: a sub-box exploration builds every region meeting it, over the whole box, so a
 * region found by two sub-boxes is the same region, and the union of the sub-boxes' regions is the
 * set one run over the whole box finds. The canonical form (`joinPartitions`: union by active set,
 * canonical order, neighbours recomputed) then makes the table the same bytes for every thread
 * count, as it does for `solve --part` + `join`. One thread is one sub-box (the whole box) on one
 * worker: the exploration runs off the main thread, which stays free to answer Ctrl-C and to write
 * checkpoints.
 *
 * The price of the split: a region that straddles a cut is built (and partly covered) by every
 * sub-box it meets. `built()` counts the regions built, duplicates included.
 *
 * Workers send each region they build and each region whose facets they have covered to this
 * thread, which keeps the union (the first copy of each active set) and, per sub-box, the keys
 * covered in it: that is the state a checkpoint holds (`SubBoxProgress`), and a resumed run gives
 * each unfinished sub-box the regions meeting it and the keys already covered in it.
 */
import { Worker } from 'node:worker_threads';
import { setFlagsFromString } from 'node:v8';
import { addNeighbourCounts, beginJoin, buildGuesses, canonicalNeighbours, mergeNeighbours, subBox, TWINS_FROM, zeroNeighbourCounts, type GuessHints, type JoinOptions, type NeighbourCounts } from '../mpqp/canonical.js';
import { cutWeights, pilotSamples, splitBox, type PlaneCount } from '../mpqp/split.js';
import type { CriticalRegion, ExplorationState, ExplorationWork, MpqpProblem, Partition, PartitionStats, Progress, SolveOptions } from '../mpqp/types.js';
import { sumCauses, witnessesOf } from '../mpqp/types.js';
import { tol } from '../tol.js';
import type { SubBoxProgress } from './part.js';
import { RegionStore, renderRegion, skipPacked, type PackedCursor, type PackedRegions } from './region-store.js';

type Box = { lower: number[]; upper: number[] };
type RegionBox = { lo: number[]; hi: number[] };

/** What a worker is started with (src/table/explore-worker.ts): only the stop flag; the problem comes by message (`ProblemMessage`). */
export interface ExploreWorkerData {
  /** Int32Array on a SharedArrayBuffer: [0] = 1 asks every worker to stop at its next check */
  signal: Int32Array;
}

/** The problem the jobs that follow are about (main thread → worker, once per problem). */
export interface ProblemMessage {
  kind: 'problem';
  mpqp: MpqpProblem;
  options: Pick<SolveOptions, 'lp' | 'lean'>;
}

/** Count distinct active sets on the mid-planes of some axes of a box (`midPlaneCount`; the answer is `{ type: 'pilot', counts }`). */
export interface PilotJob {
  kind: 'pilot';
  box: Box;
  axes: number[];
  samples: number;
}

/** One sub-box to explore (main thread → worker). */
export interface ExploreJob {
  kind: 'explore';
  job: number;
  within: Box | undefined;
  maxRegions: number | undefined;
  /** seconds left of the time limit when the job starts */
  timeLimit: number | undefined;
  resume: ExplorationState | null;
  /** when the job completes, build the closure guesses across its regions' facets too (`buildGuesses`, sent with `done`) */
  guesses?: boolean;
  /** with `guesses`: also the twin facet pairs among its regions in clusters of at least this many facets (`twinPairs`, sent with `done`) */
  twinsFrom?: number;
}

/** A share of the canonical neighbours (main thread → worker; the answer is `number[][][]`). */
export interface NeighbourJob {
  kind: 'neighbours';
  /** the regions in canonical order: only A, b, the facets' kinds and the Chebyshev centre are read */
  regions: (Pick<CriticalRegion, 'A' | 'b' | 'facets'> & { chebyshev: { center: ArrayLike<number> } })[];
  boxes: { lo: ArrayLike<number>; hi: ArrayLike<number> }[];
  index: number;
  count: number;
}

/** One event of a worker's job, in the order it happened. */
export type ExploreWorkerEvent =
  | { type: 'found'; region: CriticalRegion; box: RegionBox }
  /** a region found, its record the batch's next in `packed` (`RegionBatch`), with its active-set key */
  | { type: 'packed'; key: string }
  | { type: 'processed'; key: string }
  | { type: 'progress'; progress: Progress };

/** Messages from a worker: events go in batches (at most every 50 ms), then one `done` per job. */
export type ExploreWorkerMessage =
  | { type: 'batch'; job: number; events: ExploreWorkerEvent[]; packed: PackedRegions | null }
  | { type: 'done'; job: number; stats: PartitionStats; work: ExplorationWork; guesses?: ReturnType<typeof buildGuesses>; twins?: { keys: string[]; facets: number[] } }
  | { type: 'pilot'; counts: PlaneCount[] }
  | { type: 'neighbours'; lists: number[][][]; lps: number; counts: NeighbourCounts };

/**
 * Worker threads kept for a whole solve: started before the problem is read (their start-up and
 * module loading overlap the set-up), given the problem once, then used for the pilot, the
 * exploration and the canonical neighbours, so every step after the first runs in a warm isolate
 * (each new isolate pays its own JIT warm-up again). The caller ends them with `terminate`.
 */
export interface ThreadPool {
  readonly workers: readonly Worker[];
  /** shared stop flag of the workers (`ExploreWorkerData.signal`) */
  readonly signal: Int32Array;
  /** hand `mpqp` to every worker, unless they hold it already (with these options; options absent: any) */
  setProblem(mpqp: MpqpProblem, options?: Pick<SolveOptions, 'lp' | 'lean'>): void;
  /** end every worker at once; resolves when they have exited (their heaps are freed then) */
  terminate(): Promise<void>;
}

/**
 * V8 tuning set for a solve on 2 or more threads (`tuneJitForThreads`), before its workers start.
 * Every isolate compiles the exploration's hot code on its own (~1.5 s of compiler time per isolate
 * on boom-4d-n8, on V8's helper threads): with one worker that runs on the idle second core, with
 * two workers on two cores it takes CPU from them. A smaller cumulative inlining budget (920 → 200
 * bytecodes) makes each optimised compile cheaper, and a 4× interrupt budget (tier-up later, on
 * fuller type feedback) makes fewer of them end in a deoptimisation and a compile again (buildRegion
 * and facetRowsByLp were compiled 5–7 times each in one cold run). Measured (built CLI, --threads 2,
 * alternated, CPU seconds of every thread of the process; load 8–11): boom-4d-n8 12.3/12.6/12.6 →
 * 10.2/11.1/11.1 s, glider-2d-n40 9.4/8.6 → 8.3/7.3 s; the workers' own CPU unchanged, the helper
 * threads' down by a third. Not set for one thread: there the worker's own CPU rose by ~0.3 s
 * (boom-4d-n8), and the worker is the critical path. JIT flags change no result (same bytes).
 */
export const threadsV8Flags = ['--max-inlined-bytecode-size-cumulative=200', '--interrupt-budget=270336'] as const;

/** Set `threadsV8Flags` when `threads` ≥ 2 (process-wide: call before the workers start, so their isolates read them). */
export function tuneJitForThreads(threads: number): void {
  if (threads < 2) return;
  for (const f of threadsV8Flags) setFlagsFromString(f);
}

/** Start `threads` workers (≥ 1) for `exploreThreaded` and `canonicalThreaded`. */
export function startThreadPool(threads: number): ThreadPool {
  const signal = new Int32Array(new SharedArrayBuffer(4));
  const workers = Array.from({ length: Math.max(1, Math.floor(threads)) }, () => startWorker({ signal }));
  let held: { mpqp: MpqpProblem; key: string } | null = null;
  return {
    workers,
    signal,
    setProblem(mpqp, options) {
      if (held && held.mpqp === mpqp && !options) return;
      const key = `${options?.lp ?? 'kernel'} ${options?.lean ? 'lean' : 'full'}`;
      if (held && held.mpqp === mpqp && held.key === key) return;
      held = { mpqp, key };
      for (const w of workers) w.postMessage({ kind: 'problem', mpqp, options: { lp: options?.lp, lean: options?.lean } } satisfies ProblemMessage);
    },
    async terminate() {
      await Promise.all(workers.map((w) => w.terminate()));
    },
  };
}

/** The next message of a worker, or its error. */
function reply<T>(worker: Worker): Promise<T> {
  return new Promise<T>((res, rej) => {
    const onMessage = (m: T) => {
      worker.off('error', onError);
      res(m);
    };
    const onError = (e: unknown) => {
      worker.off('message', onMessage);
      rej(e);
    };
    worker.once('message', onMessage);
    worker.once('error', onError);
  });
}

/**
 * The pilot of the split: each worker counts the distinct active sets on the mid-planes of its
 * share of the axes (`midPlaneCount`, `pilotSamples` points each); the counts, in axis order.
 */
async function pilot(pool: ThreadPool, ntheta: number, box: Box): Promise<PlaneCount[]> {
  const W = pool.workers.length;
  const answers = await Promise.all(
    pool.workers.map((w, i) => {
      const axes: number[] = [];
      for (let a = i; a < ntheta; a += W) axes.push(a);
      if (!axes.length) return Promise.resolve({ type: 'pilot', counts: [] } as ExploreWorkerMessage);
      const r = reply<ExploreWorkerMessage>(w);
      w.postMessage({ kind: 'pilot', box, axes, samples: pilotSamples(ntheta) } satisfies PilotJob);
      return r;
    }),
  );
  const counts: PlaneCount[] = [];
  for (const a of answers) if (a.type === 'pilot') counts.push(...a.counts);
  return counts.sort((x, y) => x.axis - y.axis);
}

/** A running exploration: its result, and what the caller may do meanwhile. */
export interface ThreadedExploration {
  /** the partition (not yet canonical: the union of the sub-boxes' regions, first copy of each) */
  result: Promise<Partition>;
  /** ask every worker to stop at its next check (the result is then marked 'interrupted') */
  stop(): void;
  /** end the workers at once (a second Ctrl-C); the result resolves with what was found so far */
  terminate(): void;
  /** the state to resume from, as of now: the union of regions found, and where every sub-box stands */
  snapshot(): { state: ExplorationState; subBoxes: SubBoxProgress };
  /** regions built so far by all sub-boxes, a region straddling a cut once per sub-box that built it */
  built(): number;
  /** the closure guesses the finished sub-boxes built ahead (`ThreadedOptions.guesses`), for `JoinOptions.guesses`; empty when not asked for */
  guesses(): GuessHints;
}

/** Options of `exploreThreaded`. */
export interface ThreadedOptions extends Pick<SolveOptions, 'maxRegions' | 'timeLimit' | 'lp' | 'within' | 'lean'> {
  /** worker threads (≥ 1) */
  threads: number;
  /** continue from this state (a checkpoint) */
  resume?: ExplorationState | null;
  /** where the sub-boxes of the resumed run stood (a checkpoint of a threaded run); absent: the state covers the whole box explored */
  resumeSubBoxes?: SubBoxProgress | null;
  /** progress of all workers together, at most every ~100 ms */
  onProgress?: (p: Progress) => void;
  /** run on these workers (their number is the thread count; they are left running, for `canonicalThreaded`, unless `endPool`); absent: `threads` workers of its own, ended with the run */
  pool?: ThreadPool;
  /**
   * end the pool's workers when the exploration ends, before its regions are unpacked into the
   * partition (`RegionStore`): their heaps, each holding its own copy of its regions, are freed
   * first, so the two are never held at once (peak memory)
   */
  endPool?: boolean;
  /**
   * each sub-box that completes also builds the canonical form's closure guesses across its
   * regions' facets, in its warm worker (`buildGuesses`; `guesses()` gives them to
   * `canonicalThreaded`): hints, the table is the same bytes with or without them
   */
  guesses?: boolean;
  /** with `guesses`: the sub-boxes seek twin facets (`twinPairs`) in clusters of at least this many of their facets (default ⌈TWINS_FROM / sub-boxes⌉; for tests) */
  twinsFrom?: number;
  /**
   * the result's regions whose table text was rendered (`RegionStore.setText`) carry shared empty
   * placeholders for their law, moves and value (`RegionStore.get(k, true)`): for a caller that
   * only puts them in canonical form and writes them by `regionJson`, which reads those from the
   * text (fewer arrays unpacked and kept through the serial tail); checkpoints unpack in full
   */
  shedRendered?: boolean;
}

const zeroStats = (): PartitionStats => ({ regions: 0, candidates: 0, lps: 0, qps: 0, complete: true, stopReason: 'done', unresolvedPieces: 0, gaveUpAt: [] });
const zeroWork = (): ExplorationWork => ({ guesses: 0, guessHits: 0, seededSlices: 0, landings: 0, regionLps: 0, coverLps: 0 });

/** Whether a region's box meets a sub-box (within tol.inside). */
function meets(b: { lo: ArrayLike<number>; hi: ArrayLike<number> }, s: Box): boolean {
  for (let j = 0; j < s.lower.length; j++) if (b.hi[j] < s.lower[j] - tol.inside || b.lo[j] > s.upper[j] + tol.inside) return false;
  return true;
}

/** A worker running src/table/explore-worker (from source under tsx, as in tests and the bench, it registers tsx's loader first). */
function startWorker(data: ExploreWorkerData): Worker {
  const ts = import.meta.url.endsWith('.ts');
  const url = new URL(ts ? './explore-worker.ts' : './explore-worker.js', import.meta.url);
  return ts
    ? new Worker(`import('tsx/esm/api').then((api) => { api.register(); return import(${JSON.stringify(url.href)}); })`, { eval: true, workerData: data })
    : new Worker(url, { workerData: data });
}

/**
 * Options of `canonicalThreaded`. `workerShares`: hand the neighbours step to the workers in
 * shares (default false: this thread does it alone). Since the step's pair tests went LP-free
 * (s18), the shares were slower than one thread, measured with the built CLI, 2 threads, paired
 * and alternated (load 3–4): boom-4d-n12 (7 843 regions) 5.1–6.4 s shared against 3.3–3.5 s alone;
 * mixer-5d-n10 at 3 000 regions 3.2–3.8 s against 2.5–2.8 s. Each worker is sent every region and
 * sets up its vertex lists and boxes again, which now outweighs the half of the pair tests it saves.
 * Same lists either way (tested).
 */
export interface CanonicalThreadedOptions extends JoinOptions {
  workerShares?: boolean;
}

/**
 * The canonical form of an exploration's partition (`joinPartitions`). The closure step runs on
 * this thread; the neighbours step is shared: with a pool of W ≥ 2, its warm workers take every
 * W-th cluster of facets each; without one, this thread and `threads − 1` fresh workers. The lists
 * merged are those one thread computes (`canonicalNeighbours`). One thread, or a small partition
 * (under 500 regions), is done here alone (on one thread a pool worker was no faster, measured
 * under load, and it kept its exploration's heap beside the copies: glider-2d-n40 peak RSS
 * 316 MB against 254 MB). `options.shouldStop` bounds both steps (the workers' shares stop
 * on the shared flag, raised from here): a cut result is marked incomplete (`stats.neighboursCut`).
 */
export async function canonicalThreaded(mpqp: MpqpProblem, partition: Partition, threads: number, options: CanonicalThreadedOptions = {}, pool?: ThreadPool): Promise<Partition> {
  const join = beginJoin(mpqp, [partition], options);
  const W = pool ? pool.workers.length : Math.max(1, Math.floor(threads));
  const counts = zeroNeighbourCounts();
  if (W === 1 || !options.workerShares || join.regions.length < 500)
    return join.finish(canonicalNeighbours(mpqp, join.regions, join.boxes, join.lp, join.progress, undefined, { shouldStop: join.shouldStop, counts, twinHints: join.twinHints, twinsFrom: options.twinsFrom }), counts);
  // the Chebyshev centres go too: the pair test's accept from the centres (facet-pairs.ts) needs them
  const regions = join.regions.map((R) => ({ A: R.A, b: R.b, chebyshev: { center: R.chebyshev.center }, facets: R.facets.map((f) => ({ kind: f.kind, row: f.row, neighbours: [] })) }));
  const boxes = join.boxes.map((b) => ({ lo: Array.from(b.lo), hi: Array.from(b.hi) }));
  join.progress('neighbours', 0, join.regions.length);
  // the workers' shares stop on the shared flag: raised here when `shouldStop` says so (asked
  // every 50 ms while this thread waits, and by this thread's own share)
  const signal = pool ? pool.signal : new Int32Array(new SharedArrayBuffer(4));
  Atomics.store(signal, 0, 0);
  const stop = (): boolean => {
    if (Atomics.load(signal, 0) === 1) return true;
    if (!join.shouldStop?.()) return false;
    Atomics.store(signal, 0, 1);
    return true;
  };
  const watch = join.shouldStop ? setInterval(stop, 50) : null;
  const collect = (lists: number[][][][], t: ExploreWorkerMessage): void => {
    if (t.type !== 'neighbours') return;
    join.lp.lps += t.lps;
    addNeighbourCounts(counts, t.counts);
    lists.push(t.lists);
  };
  try {
    if (pool) {
      pool.setProblem(mpqp);
      const shares = await Promise.all(
        pool.workers.map((w, i) => {
          const r = reply<ExploreWorkerMessage>(w);
          w.postMessage({ kind: 'neighbours', regions, boxes, index: i, count: W } satisfies NeighbourJob);
          return r;
        }),
      );
      const lists: number[][][][] = [];
      for (const t of shares) collect(lists, t);
      return join.finish(mergeNeighbours(lists), counts);
    }
    const data: ExploreWorkerData = { signal };
    const started = Array.from({ length: W - 1 }, (_, w) => {
      const worker = startWorker(data);
      const done = reply<ExploreWorkerMessage>(worker).finally(() => void worker.terminate());
      worker.postMessage({ kind: 'problem', mpqp, options: {} } satisfies ProblemMessage);
      worker.postMessage({ kind: 'neighbours', regions, boxes, index: w + 1, count: W } satisfies NeighbourJob);
      return done;
    });
    const mine = canonicalNeighbours(mpqp, join.regions, join.boxes, join.lp, join.progress, { index: 0, count: W }, { shouldStop: stop, counts });
    const lists: number[][][][] = [mine];
    for (const t of await Promise.all(started)) collect(lists, t);
    return join.finish(mergeNeighbours(lists), counts);
  } finally {
    if (watch) clearInterval(watch);
  }
}

/**
 * The share of a region bound `max` of sub-box `s` of `count`: ⌊max/count⌋, one more for the first
 * `max mod count` sub-boxes (the shares add up to `max`; a share may be 0 when `max` < `count`).
 */
export function regionQuota(max: number, s: number, count: number): number {
  return Math.floor(max / count) + (s < max % count ? 1 : 0);
}

/** Start the exploration of `mpqp` (or of `options.within`) on `options.threads` workers, one sub-box per thread. */
export function exploreThreaded(mpqp: MpqpProblem, options: ThreadedOptions): ThreadedExploration {
  const pool = options.pool ?? startThreadPool(options.threads);
  const W = pool.workers.length;
  const outer: Box = options.within ? { lower: Array.from(options.within.lower), upper: Array.from(options.within.upper) } : { lower: Array.from(mpqp.box.lower), upper: Array.from(mpqp.box.upper) };
  // a checkpoint of a split run keeps its split; a whole-box state is split anew (keys covered over
  // the whole box are covered in every sub-box)
  const resumed = options.resume ?? null;
  const rs = resumed ? options.resumeSubBoxes ?? null : null;
  const M = rs ? rs.count : W;
  // the cut: one sub-box is the box; a resumed split keeps its sub-boxes (files older than the
  // pilot did not record them: they were `subBox`'s); a new split is chosen by the pilot, below
  let boxes: Box[] | null = M === 1 ? [outer] : rs ? Array.from({ length: M }, (_, s) => rs.boxes?.[s] ?? subBox(outer, s, M)) : null;
  const signal = pool.signal;
  Atomics.store(signal, 0, 0);
  const t0 = performance.now();
  // the union, first copy of each active set: key → index in `store`, where the regions are packed
  // into typed arrays (the workers hold them as objects; unpacked when the partition is assembled)
  const found = new Map<string, number>();
  const store = new RegionStore();
  const done: Set<string>[] = Array.from({ length: M }, (_, s) => new Set(rs ? rs.done[s] ?? [] : (resumed?.done ?? [])));
  const finished: ({ stats: PartitionStats; work: ExplorationWork } | null)[] = new Array(M).fill(null);
  const latest: (Progress | null)[] = new Array(M).fill(null);
  // counters carried over from the resumed run, counted once
  const base = { stats: resumed ? { ...resumed.stats } : zeroStats(), work: resumed ? { ...resumed.work } : zeroWork() };
  if (resumed)
    resumed.regions.forEach((region, i) => {
      const key = region.activeSet.join(',');
      if (!found.has(key)) found.set(key, store.add(region, resumed.boxes[i]));
    });
  /** the regions resumed come first in `store`, and are all in the table */
  const resumedCount = store.length;
  if (rs) for (const s of rs.finished) finished[s] = { stats: zeroStats(), work: zeroWork() };
  const queue: number[] = [];
  for (let s = 0; s < M; s++) if (!finished[s]) queue.push(s);
  let built = 0;
  const hints: GuessHints = { lean: !!options.lean, tried: new Set(), thin: new Map() };
  let lastReport = 0;
  let firstStop: PartitionStats['stopReason'] | null = null;
  /**
   * `--max-regions` split among the sub-boxes (`regionQuota`): each job stops at its own quota, in
   * its own exploration order, and the others run on (a job at its quota stops nobody: stopping the
   * others at whatever point they had reached made the table depend on the race between workers).
   * The table then holds at most the bound, and the same regions in every run of the same command.
   */
  const quota = (s: number): number | undefined => (options.maxRegions === undefined ? undefined : regionQuota(options.maxRegions, s, M));
  /** some sub-box stopped at its quota (the table is incomplete, `max-regions`, once every job has ended) */
  let atQuota = false;
  // a job checks its quota between steps, so it can build a few regions past it (and a job whose
  // quota is 0 still builds its first region): of each job's regions only the first `quota` it
  // reports (in its own order) go into the table, so the table holds at most the bound. Every
  // region is kept in the union all the same, for the checkpoint: a resumed sub-box starts from the
  // regions meeting it, and one with none would not start at all. One sub-box: cut in `partition`,
  // after the regions resumed, as before
  const shared = M > 1 && options.maxRegions !== undefined;
  const taken: number[] = new Array(M).fill(0);
  /** store indices that are in the table of a bounded split run (`shared`): taken by some job within its quota, or resumed */
  const listed = new Set<number>();
  const take = (s: number, k: number): void => {
    if (shared && taken[s]++ < quota(s)!) listed.add(k);
  };
  let resolve!: (p: Partition) => void;
  let reject!: (e: unknown) => void;
  const result = new Promise<Partition>((res, rej) => {
    resolve = res;
    reject = rej;
  });
  let settled = false;
  const workers: Worker[] = [];
  const detach: (() => void)[] = [];
  /** the union as a partition (`regions: false`: the counters only, regions left packed and the lists empty) */
  const partition = (complete: boolean, reason: PartitionStats['stopReason'], regions = true, all = false, shed = false): Partition => {
    const stats: PartitionStats = { ...zeroStats(), candidates: base.stats.candidates, lps: base.stats.lps, qps: base.stats.qps, unresolvedPieces: base.stats.unresolvedPieces, causes: sumCauses(base.stats.causes) };
    // the facets given a piece up on, in any sub-box (a facet at the cut may be in two): re-checked by the canonical form
    const gaveUpAt = new Set<string>(witnessesOf(base.stats));
    const work = { ...base.work };
    for (let s = 0; s < M; s++) {
      const f = finished[s];
      const p = latest[s];
      stats.candidates += f ? f.stats.candidates : (p?.candidates ?? 0);
      stats.lps += f ? f.stats.lps : (p?.lps ?? 0);
      stats.qps += f ? f.stats.qps : (p?.qps ?? 0);
      stats.unresolvedPieces += f?.stats.unresolvedPieces ?? 0;
      stats.causes = sumCauses(stats.causes, f?.stats.causes);
      for (const w of witnessesOf(f?.stats)) gaveUpAt.add(w);
      if (f) for (const k of Object.keys(work) as (keyof ExplorationWork)[]) work[k] += f.work[k];
    }
    // a run bounded by --max-regions holds at most the bound: each sub-box adds at most its quota
    // (`take`), a region two sub-boxes built is kept once; a resumed run's regions are all kept too.
    // One sub-box: its first regions up to the bound (the order is its own, so the same every run)
    const count = M === 1 && reason === 'max-regions' && options.maxRegions !== undefined && !all ? Math.min(store.length, options.maxRegions) : store.length;
    const keep = shared && !all ? Array.from({ length: count }, (_, k) => k).filter((k) => k < resumedCount || listed.has(k)) : null;
    const list = !regions ? [] : keep ? keep.map((k) => store.get(k, shed)) : Array.from({ length: count }, (_, k) => store.get(k, shed));
    stats.gaveUpAt = [...gaveUpAt].sort();
    stats.regions = keep ? keep.length : count;
    stats.complete = complete;
    stats.stopReason = reason;
    return { regions: list.map((e) => e.region), boxes: list.map((e) => e.box), stats, work };
  };
  const snapshot = (): { state: ExplorationState; subBoxes: SubBoxProgress } => {
    const p = partition(true, 'done', true, true);
    if (!boxes) {
      // the pilot is still choosing the cut: nothing is explored yet, the state is the one resumed (or empty)
      const whole = resumed ? [...resumed.done] : [];
      return { state: { regions: p.regions, boxes: p.boxes as RegionBox[], done: whole, stats: p.stats, work: p.work! }, subBoxes: { count: 1, finished: [], done: [whole] } };
    }
    const cut = boxes;
    const finishedList: number[] = [];
    for (let s = 0; s < M; s++) if (finished[s]) finishedList.push(s);
    // the state on its own stays what a single run's is: a key is covered over the whole box explored
    // when it is covered in every sub-box its region's box meets (a finished sub-box covered them all)
    const whole: string[] = [];
    p.regions.forEach((R, i) => {
      const key = R.activeSet.join(',');
      let all = true;
      for (let s = 0; s < M && all; s++) if (!finished[s] && !done[s].has(key) && meets(p.boxes![i], cut[s])) all = false;
      if (all) whole.push(key);
    });
    return {
      state: { regions: p.regions, boxes: p.boxes as RegionBox[], done: whole, stats: p.stats, work: p.work! },
      subBoxes: { count: M, finished: finishedList, done: done.map((d, s) => (finished[s] ? [] : [...d])), boxes: cut.map((b) => ({ lower: [...b.lower], upper: [...b.upper] })) },
    };
  };
  const settle = (p: Partition | null, error?: unknown): void => {
    if (settled) return;
    settled = true;
    for (const off of detach) off();
    if (!options.pool) void pool.terminate();
    if (p) resolve(p);
    else reject(error);
  };
  const stopAll = (why: PartitionStats['stopReason']): void => {
    if (firstStop === null) firstStop = why;
    Atomics.store(signal, 0, 1);
  };
  const report = (): void => {
    const now = performance.now();
    if (!options.onProgress || now - lastReport < 100) return;
    lastReport = now;
    const p = partition(true, 'done', false).stats;
    options.onProgress({ candidates: p.candidates, regions: p.regions, lps: p.lps, qps: p.qps, elapsedSeconds: (now - t0) / 1000 });
  };
  /** the next sub-box for a worker, or false when there is none (or the run is stopping) */
  const next = (worker: Worker): boolean => {
    if (firstStop !== null || queue.length === 0) return false;
    const s = queue.shift()!;
    let resume: ExplorationState | null = null;
    if (resumed) {
      // the regions known that meet this sub-box, and the keys already covered in it
      const regions: CriticalRegion[] = [];
      const bs: RegionBox[] = [];
      for (let k = 0; k < store.length; k++) {
        const e = store.get(k);
        if (meets(e.box, boxes![s])) {
          regions.push(e.region);
          bs.push(e.box);
        }
      }
      resume = { regions, boxes: bs, done: [...done[s]], stats: zeroStats(), work: zeroWork() };
    }
    const elapsed = (performance.now() - t0) / 1000;
    const job: ExploreJob = {
      kind: 'explore',
      job: s,
      within: M === 1 && !options.within ? undefined : boxes![s],
      maxRegions: quota(s),
      timeLimit: options.timeLimit === undefined ? undefined : Math.max(0, options.timeLimit - elapsed),
      resume,
      guesses: options.guesses,
      // each sub-box holds about 1/M of a plane's facets: it seeks twins from TWINS_FROM/M on
      twinsFrom: options.guesses ? (options.twinsFrom ?? Math.ceil(TWINS_FROM / M)) : undefined,
    };
    worker.postMessage(job);
    return true;
  };
  let running = 0;
  pool.setProblem(mpqp, { lp: options.lp, lean: options.lean });
  const end = (): void => {
    const complete = firstStop === null && !atQuota && finished.every((f) => f);
    const reason = firstStop ?? (atQuota ? 'max-regions' : complete ? 'done' : 'interrupted');
    if (options.endPool)
      pool.terminate().then(
        () => settle(partition(complete, reason, true, false, !!options.shedRendered)),
        (e) => settle(null, e),
      );
    else settle(partition(complete, reason, true, false, !!options.shedRendered));
  };
  const begin = (): void => {
    // one job to each worker at once (`next` takes jobs off the queue, so count before the loop:
    // bounding the loop by the queue's length started one worker only, and the sub-boxes ran one
    // after the other)
    const starting = Math.min(W, queue.length);
    for (let w = 0; w < starting; w++) {
      const worker = pool.workers[w];
      workers.push(worker);
      const onMessage = (msg: ExploreWorkerMessage): void => {
        if (settled) return;
        if (msg.type === 'batch') {
          const at: PackedCursor = { i: 0, f: 0 };
          const fresh: number[] = [];
          for (const ev of msg.events) {
            if (ev.type === 'packed') {
              // packed by the worker (its buffers transferred, no object per number to clone and pack here)
              built++;
              if (!found.has(ev.key)) {
                const k = store.addPacked(msg.packed!, at);
                found.set(ev.key, k);
                fresh.push(k);
              }
              take(msg.job, found.get(ev.key)!);
              skipPacked(msg.packed!, at);
            } else if (ev.type === 'found') {
              built++;
              const key = ev.region.activeSet.join(',');
              if (!found.has(key)) {
                const k = store.add(ev.region, ev.box);
                found.set(key, k);
                fresh.push(k);
              }
              take(msg.job, found.get(key)!);
            } else if (ev.type === 'processed') done[msg.job].add(ev.key);
            else latest[msg.job] = ev.progress;
          }
          // the new regions' table text, rendered now (this thread waits for the workers anyway; on one
          // worker the second core is free) instead of in the serial tail when the table is written
          for (const k of fresh) store.setText(k, renderRegion(store.get(k).region));
          report();
        } else if (msg.type === 'done') {
          running--;
          latest[msg.job] = null;
          if (msg.guesses && msg.guesses.lean === hints.lean) {
            for (const k of msg.guesses.tried) hints.tried.add(k);
            for (const k of msg.guesses.licq) (hints.licq ??= new Set()).add(k);
            for (const t of msg.guesses.thin) if (!hints.thin.has(t.key)) hints.thin.set(t.key, { region: t.region, box: t.box });
          }
          if (msg.twins) {
            hints.twins ??= { keys: [], facets: [] };
            for (const k of msg.twins.keys) hints.twins.keys.push(k);
            for (const f of msg.twins.facets) hints.twins.facets.push(f);
          }
          if (msg.stats.complete) finished[msg.job] = { stats: msg.stats, work: msg.work };
          else {
            // a stopped sub-box keeps its counters (its regions and covered keys are already here)
            base.stats.candidates += msg.stats.candidates;
            base.stats.lps += msg.stats.lps;
            base.stats.qps += msg.stats.qps;
            // (the lists first: an old count with no list of its own reads as "?")
            base.stats.gaveUpAt = [...new Set([...witnessesOf(base.stats), ...witnessesOf(msg.stats)])].sort();
            base.stats.unresolvedPieces += msg.stats.unresolvedPieces;
            base.stats.causes = sumCauses(base.stats.causes, msg.stats.causes);
            for (const k of Object.keys(base.work) as (keyof ExplorationWork)[]) base.work[k] += msg.work[k];
            // a sub-box at its region quota: the others run on to theirs (deterministic, see `quota`);
            // stopped by the time limit or Ctrl-C: the others stop too
            if (msg.stats.stopReason === 'max-regions') atQuota = true;
            else stopAll(msg.stats.stopReason);
          }
          if (next(worker)) running++;
          else if (running === 0) end();
        }
      };
      const onError = (e: unknown): void => settle(null, e);
      worker.on('message', onMessage);
      worker.on('error', onError);
      detach.push(() => {
        worker.off('message', onMessage);
        worker.off('error', onError);
      });
      if (next(worker)) running++;
    }
    if (running === 0) end(); // every sub-box of a resumed run was finished (or the run was stopped during the pilot)
  };
  if (boxes) {
    if (queue.length === 0) queueMicrotask(end);
    else begin();
  } else
    pilot(pool, mpqp.ntheta, outer).then(
      (counts) => {
        if (settled) return;
        const weights = cutWeights(counts);
        boxes = Array.from({ length: M }, (_, s) => splitBox(outer, s, M, weights));
        begin();
      },
      (e) => settle(null, e),
    );
  return {
    result,
    stop: () => stopAll('interrupted'),
    terminate: () => {
      if (firstStop === null) firstStop = 'interrupted';
      void pool.terminate();
      settle(partition(false, firstStop));
    },
    snapshot,
    built: () => built,
    guesses: () => hints,
  };
}
