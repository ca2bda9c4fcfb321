/**
 * The exploration on several threads (Node only: worker_threads).
 *
 * Every worker runs `solvePartition` on the same mpQP with a `ShareChannel`: it builds regions as
 * it lands on them and announces each one; this thread relays a region to the other workers the
 * first time its active set is seen, so every worker locates points among all regions known. The
 * facets of a region are covered by one worker only, the owner of its active set (a hash of the
 * key modulo the thread count). The exploration is over when every worker has looked for the
 * first region and every region announced has been covered by its owner. A region two workers build
 * at the same moment is the same region (built from its active set alone), so the set of regions
 * does not depend on the timing, and the canonical form (`joinPartitions`) makes the table the same
 * bytes for every thread count.
 *
 * One thread is the same mechanism with one worker: the exploration runs off the main thread,
 * which stays free to answer Ctrl-C and to write checkpoints.
 */
import { Worker, MessageChannel } from 'node:worker_threads';
import type { CriticalRegion, ExplorationState, ExplorationWork, MpqpProblem, Partition, PartitionStats, Progress, SolveOptions } from '../mpqp/types.js';
import { sumCauses } from '../mpqp/types.js';

/** What a worker is started with (src/table/explore-worker.ts). */
export interface ExploreWorkerData {
  mpqp: MpqpProblem;
  options: Pick<SolveOptions, 'maxRegions' | 'timeLimit' | 'lp' | 'within' | 'lean'>;
  index: number;
  count: number;
  /** regions sent by the other workers arrive here (read synchronously) */
  port: import('node:worker_threads').MessagePort;
  /** Int32Array on a SharedArrayBuffer: [w] counts messages sent to worker w; [count] = 1: all done; [count + 1] = 1: stop */
  signal: Int32Array;
  progress: boolean;
  resume: ExplorationState | null;
}

/** One event of a worker, in the order it happened. */
export type ExploreWorkerEvent =
  | { type: 'found'; region: CriticalRegion; box: { lo: number[]; hi: number[] }; from?: string }
  | { type: 'seeded' }
  | { type: 'processed'; key: string }
  | { type: 'progress'; progress: Progress };

/**
 * Messages from a worker: events go in batches (a worker sends its events when it finishes
 * covering a region, before it waits and before it ends, so a region is still announced before
 * the region that led to it is reported covered), then one `done`.
 */
export type ExploreWorkerMessage = { type: 'batch'; events: ExploreWorkerEvent[] } | { type: 'done'; stats: PartitionStats; work: ExplorationWork };

/** What the main thread relays to a worker: regions new to it, without the move sequence and value function (a worker only locates and covers). */
export type ExploreRelay = { region: CriticalRegion; box: { lo: number[]; hi: number[] }; from?: string }[];

/** The fields of a region a worker reads (see `ShareChannel.receive`). */
function slim(R: CriticalRegion): CriticalRegion {
  return { id: R.id, activeSet: R.activeSet, A: R.A, b: R.b, facets: R.facets, chebyshev: R.chebyshev, law: R.law };
}

/** A running exploration: its result, and the two things the caller may do meanwhile. */
export interface ThreadedExploration {
  /** the partition (not yet canonical: regions in the order they were announced) */
  result: Promise<Partition>;
  /** ask every worker to stop at its next check (the result is then marked 'interrupted') */
  stop(): void;
  /** end the workers at once (a second Ctrl-C); the result resolves with what was announced so far */
  terminate(): void;
  /** the state to resume from, as of now: regions announced and keys covered */
  snapshot(): ExplorationState;
}

/** Options of `exploreThreaded`. */
export interface ThreadedOptions extends Pick<SolveOptions, 'maxRegions' | 'timeLimit' | 'lp' | 'within' | 'lean'> {
  /** worker threads (≥ 1) */
  threads: number;
  /** continue from this state (a checkpoint) */
  resume?: ExplorationState | null;
  /** progress of all workers together, at most every ~100 ms */
  onProgress?: (p: Progress) => void;
}

/** FNV-1a of the key: which worker owns a region. */
export function ownerOf(key: string, count: number): number {
  let h = 0x811c9dc5;
  for (let i = 0; i < key.length; i++) {
    h ^= key.charCodeAt(i);
    h = Math.imul(h, 0x01000193) >>> 0;
  }
  return h % count;
}

/** Start the exploration of `mpqp` on `options.threads` workers. */
export function exploreThreaded(mpqp: MpqpProblem, options: ThreadedOptions): ThreadedExploration {
  const W = Math.max(1, Math.floor(options.threads));
  const signal = new Int32Array(new SharedArrayBuffer(4 * (W + 2)));
  const t0 = performance.now();
  const found = new Map<string, { region: CriticalRegion; box: { lo: number[]; hi: number[] } }>();
  const processed = new Set<string>();
  if (options.resume) {
    options.resume.regions.forEach((region, i) => {
      const key = region.activeSet.join(',');
      if (!found.has(key)) found.set(key, { region, box: options.resume!.boxes[i] });
    });
    for (const k of options.resume.done) if (found.has(k)) processed.add(k);
  }
  const ts = import.meta.url.endsWith('.ts'); // run from source under tsx (tests, bench)
  const ports: import('node:worker_threads').MessagePort[] = [];
  const workers: Worker[] = [];
  const latest: Progress[] = [];
  const finished: ({ stats: PartitionStats; work: ExplorationWork } | null)[] = new Array(W).fill(null);
  let seeded = 0;
  let lastReport = 0;
  let firstStop: PartitionStats['stopReason'] | null = null;
  let resolve!: (p: Partition) => void;
  let reject!: (e: unknown) => void;
  const result = new Promise<Partition>((res, rej) => {
    resolve = res;
    reject = rej;
  });
  let settled = false;
  const zero = (): PartitionStats => ({ regions: 0, candidates: 0, lps: 0, qps: 0, complete: true, stopReason: 'done', unresolvedPieces: 0 });
  const partition = (complete: boolean, reason: PartitionStats['stopReason']): Partition => {
    const stats = zero();
    const work: ExplorationWork = { guesses: 0, guessHits: 0, seededSlices: 0, landings: 0, regionLps: 0, coverLps: 0 };
    finished.forEach((f, w) => {
      const s = f?.stats;
      const p = latest[w];
      stats.candidates += s ? s.candidates : (p?.candidates ?? 0);
      stats.lps += s ? s.lps : (p?.lps ?? 0);
      stats.qps += s ? s.qps : (p?.qps ?? 0);
      stats.unresolvedPieces += s?.unresolvedPieces ?? 0;
      stats.causes = sumCauses(stats.causes, s?.causes);
      if (f) for (const k of Object.keys(work) as (keyof ExplorationWork)[]) work[k] += f.work[k];
    });
    // Workers check the region bound on their own view of the shared set, so together they can pass
    // it by a region or two; a table stopped by --max-regions keeps the first ones found (it is marked
    // incomplete either way, and a checkpoint keeps them all).
    const all = [...found.values()];
    const list = reason === 'max-regions' && options.maxRegions !== undefined ? all.slice(0, options.maxRegions) : all;
    stats.regions = list.length;
    stats.complete = complete;
    stats.stopReason = reason;
    return { regions: list.map((e) => e.region), boxes: list.map((e) => e.box), stats, work };
  };
  const snapshot = (): ExplorationState => {
    const p = partition(true, 'done');
    return { regions: p.regions, boxes: p.boxes as { lo: number[]; hi: number[] }[], done: [...processed], stats: p.stats, work: p.work! };
  };
  const settle = (p: Partition | null, error?: unknown): void => {
    if (settled) return;
    settled = true;
    for (const w of workers) void w.terminate();
    if (p) resolve(p);
    else reject(error);
  };
  const maybeAllDone = (): void => {
    if (seeded === W && processed.size >= found.size && Atomics.load(signal, W) === 0) {
      Atomics.store(signal, W, 1);
      for (let w = 0; w < W; w++) Atomics.notify(signal, w);
    }
  };
  const stopAll = (): void => {
    Atomics.store(signal, W + 1, 1);
    for (let w = 0; w < W; w++) Atomics.notify(signal, w);
  };
  for (let w = 0; w < W; w++) {
    const { port1, port2 } = new MessageChannel();
    ports.push(port1);
    // counters of a resumed run go to the first worker only (the others would count them again)
    const resume = options.resume ? { ...options.resume, stats: w === 0 ? options.resume.stats : zero(), work: w === 0 ? options.resume.work : { guesses: 0, guessHits: 0, seededSlices: 0, landings: 0, regionLps: 0, coverLps: 0 } } : null;
    const data: ExploreWorkerData = {
      mpqp,
      options: { maxRegions: options.maxRegions, timeLimit: options.timeLimit, lp: options.lp, within: options.within, lean: options.lean },
      index: w,
      count: W,
      port: port2,
      signal,
      progress: true, // counters for checkpoints as well as for the progress line
      resume,
    };
    // from source (tests, bench under tsx), the worker registers tsx's loader before importing the .ts file
    const url = new URL(ts ? './explore-worker.ts' : './explore-worker.js', import.meta.url);
    const worker = ts
      ? new Worker(`import('tsx/esm/api').then((api) => { api.register(); return import(${JSON.stringify(url.href)}); })`, { eval: true, workerData: data, transferList: [port2] })
      : new Worker(url, { workerData: data, transferList: [port2] });
    workers.push(worker);
    worker.on('message', (msg: ExploreWorkerMessage) => {
      if (msg.type === 'batch') {
        const relay: ExploreRelay = [];
        for (const ev of msg.events) {
          if (ev.type === 'found') {
            const key = ev.region.activeSet.join(',');
            if (found.has(key)) continue;
            found.set(key, { region: ev.region, box: ev.box });
            relay.push({ region: slim(ev.region), box: ev.box, from: ev.from });
          } else if (ev.type === 'seeded') {
            seeded++;
          } else if (ev.type === 'processed') {
            processed.add(ev.key);
          } else if (ev.type === 'progress') {
            latest[w] = ev.progress;
            const now = performance.now();
            if (options.onProgress && now - lastReport >= 100) {
              lastReport = now;
              let candidates = 0;
              let lps = 0;
              let qps = 0;
              for (const p of latest) {
                candidates += p?.candidates ?? 0;
                lps += p?.lps ?? 0;
                qps += p?.qps ?? 0;
              }
              options.onProgress({ candidates, regions: found.size, lps, qps, elapsedSeconds: (now - t0) / 1000 });
            }
          }
        }
        // relay before checking for the end: a worker waiting for regions must get them first
        if (relay.length)
          for (let v = 0; v < W; v++) {
            if (v === w) continue;
            ports[v].postMessage(relay);
            Atomics.add(signal, v, 1);
            Atomics.notify(signal, v);
          }
        maybeAllDone();
      } else if (msg.type === 'done') {
        finished[w] = { stats: msg.stats, work: msg.work };
        if (!msg.stats.complete && firstStop === null) {
          firstStop = msg.stats.stopReason;
          stopAll(); // one worker stopped (limit or Ctrl-C): the others stop too
        }
        if (finished.every((f) => f)) {
          const complete = firstStop === null && processed.size >= found.size;
          settle(partition(complete, firstStop ?? (complete ? 'done' : 'interrupted')));
        }
      }
    });
    worker.on('error', (e) => settle(null, e));
  }
  return {
    result,
    stop: () => {
      if (firstStop === null) firstStop = 'interrupted';
      stopAll();
    },
    terminate: () => settle(partition(false, firstStop ?? 'interrupted')),
    snapshot,
  };
}
