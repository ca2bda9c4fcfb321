/**
 * `tessera evaluate --threads N` (CSV path): the points file's data lines split into N consecutive
 * byte ranges (at line ends), the first for this thread, the others for worker threads
 * (src/table/evaluate-worker.ts). The file's bytes are read once into shared memory; each worker
 * parses its range as soon as it gets it (while this thread reads the table and the index), then,
 * sent the table's context (the k-d tree as `BoxIndex.state()`, the packed laws, the clamp and the
 * header's column order), locates, evaluates and formats its lines into byte chunks. Every line
 * depends only on its point (`csvLines`), so the ranges joined in order are the bytes of the
 * one-thread run. A range that does not parse cleanly (a line that is not a point) makes the caller
 * read the whole file the one-thread way, which reports the first bad line as it always has.
 * Node only (worker_threads).
 */
import { Worker } from 'node:worker_threads';
import { readFileSync } from 'node:fs';
import { BoxIndex, growPart, joinTree, type BoxIndexState, type GrownTree, type TreeContext, type TreePart, type TreePlan } from './boxindex.js';
import { csvLines, orderRangePoints, parsePointsRange, type CsvContext, type EvaluateTimes, type RangePoints } from './points.js';
import { workOnBoxes, type BoxJob } from './shared-boxes.js';

/** What a worker is sent: first its range to parse, then the table's context (or `stop`). */
export type EvaluateJob =
  | { type: 'parse'; text: Uint8Array; start: number; end: number; n: number }
  | { type: 'boxes'; job: BoxJob }
  | { type: 'parse-main'; chunks: [number, number][]; claim: Int32Array }
  | { type: 'tree'; ctx: TreeContext; parts: TreePart[]; claim: Int32Array }
  | { type: 'run'; context: Omit<CsvContext, 'index'> & { index: BoxIndexState }; order: number[] | null; chunkPoints?: number };

/** What a worker sends back: `parsed` (count −1: a line that is not a point), then byte chunks in order, then `done` with its stage seconds. */
export type EvaluateWorkerMessage =
  | { type: 'parsed'; count: number; seconds: number }
  | { type: 'boxed'; blocks: number }
  | { type: 'main-chunk'; k: number; points: RangePoints | null }
  | { type: 'main-done' }
  | { type: 'grown'; k: number; tree: GrownTree }
  | { type: 'grown-done' }
  | { type: 'chunk'; bytes: Uint8Array }
  | { type: 'done'; times: { locate: number; law: number; format: number }; cpu: number }
  | { type: 'error'; message: string };

/** Workers started ahead of the table read (they load their modules meanwhile); `ThreadedCsv` uses or ends them. */
export interface EvaluatePool {
  workers: Worker[];
}

/** Start `count` evaluate workers now (from source under tsx in tests, as src/table/threads.ts does). */
export function startEvaluatePool(count: number): EvaluatePool {
  const ts = import.meta.url.endsWith('.ts');
  const url = new URL(ts ? './evaluate-worker.ts' : './evaluate-worker.js', import.meta.url);
  const workers: Worker[] = [];
  for (let i = 0; i < count; i++)
    workers.push(ts ? new Worker(`import('tsx/esm/api').then((api) => { api.register(); return import(${JSON.stringify(url.href)}); })`, { eval: true }) : new Worker(url));
  return { workers };
}

/** End the pool's workers (those not used, or after an error). */
export function endEvaluatePool(pool: EvaluatePool | null): void {
  if (pool) for (const w of pool.workers) void w.terminate();
}

/** Chunks of the main thread's range when the first worker parses it too (`ThreadedCsv`, `delegateOwn`). */
const OWN_CHUNKS = 16;

/** Consecutive ranges' points as one (the arrays joined in order; one range is returned as it is). */
function joinRangePoints(parts: RangePoints[], n: number): RangePoints {
  if (parts.length === 1) return parts[0];
  let count = 0;
  for (const p of parts) count += p.count;
  const values = new Float64Array(count * n);
  const from = new Int32Array(count * n);
  const to = new Int32Array(count * n);
  let at = 0;
  for (const p of parts) {
    values.set(p.values.subarray(0, p.count * n), at);
    from.set(p.from.subarray(0, p.count * n), at);
    to.set(p.to.subarray(0, p.count * n), at);
    at += p.count * n;
  }
  return { count, values, from, to };
}

/** Fewer bytes of points file than this per thread are not worth a worker (its start-up and warm-up): ~25 000 lines of 4 cells at 7 digits. */
export const MIN_BYTES_PER_THREAD = 1 << 20;

/**
 * The ends of `weights.length` consecutive ranges of text[start, end): range t ends after the first
 * LF at or beyond start + (end − start)·(w_0 + … + w_t)/Σw (or at `end`). Ranges may be empty.
 */
export function splitLines(text: Uint8Array, start: number, end: number, weights: number[]): [number, number][] {
  const total = weights.reduce((a, b) => a + b, 0);
  const out: [number, number][] = [];
  let a = start;
  let acc = 0;
  for (let t = 0; t < weights.length; t++) {
    acc += weights[t];
    let b = end;
    if (t < weights.length - 1) {
      const target = start + Math.floor(((end - start) * acc) / total);
      if (target <= a) b = a;
      else {
        const lf = text.indexOf(10, target - 1);
        b = lf < 0 || lf >= end ? end : lf + 1;
      }
    }
    out.push([a, b]);
    a = b;
  }
  return out;
}

/** One worker's side of a threaded run: its parse outcome and, later, its chunks. */
interface WorkerQueue {
  worker: Worker;
  parsed: Promise<number>;
  parseSeconds: number;
  /** called with each chunk of range 0 this worker parsed for the main thread (k, points), and with k = −1 when it is done with them or gone */
  mainChunk: ((k: number, p: RangePoints | null) => void) | null;
  /** called with each part of the tree this worker grew (k, subtree), and with k = −1 when it is done with them or gone */
  grown: ((k: number, t: GrownTree | null) => void) | null;
  chunks: Uint8Array[];
  done: boolean;
  error: Error | null;
  wake: (() => void) | null;
}

/**
 * The threaded CSV path, made before the table is read: the workers are sent ranges 1 … N − 1 of the
 * data lines (`splitLines` of [dataStart, end) with `weights`, range 0 for this thread) and start
 * parsing them at once. `parsed()` tells whether every range parsed; `lines` writes the output.
 */
export class ThreadedCsv {
  readonly ranges: [number, number][];
  private readonly queues: WorkerQueue[];
  /** seconds the workers spent on their parse (summed), known once `parsed()` resolved */
  parseSeconds = 0;
  /** the workers' locate/law/format seconds (summed), known once `lines` ended */
  readonly workerTimes = { locate: 0, law: 0, format: 0 };
  /** each worker's point count (−1: its range did not parse), known once `parsed()` resolved */
  workerCounts: number[] = [];
  /** each worker's thread CPU seconds (`threadCpuSeconds`, NaN where unknown), known once `lines` ended */
  readonly workerCpu: number[] = [];

  constructor(
    private readonly pool: EvaluatePool,
    readonly text: Uint8Array,
    dataStart: number,
    readonly n: number,
    weights: number[],
    delegateOwn = false,
  ) {
    this.ranges = splitLines(text, dataStart, text.length, weights);
    this.queues = pool.workers.slice(0, weights.length - 1).map((worker, w) => {
      const [start, end] = this.ranges[w + 1];
      const q: WorkerQueue = { worker, parsed: Promise.resolve(0), parseSeconds: 0, mainChunk: null, grown: null, chunks: [], done: false, error: null, wake: null };
      let parsedResolve: (count: number) => void = () => {};
      q.parsed = new Promise<number>((resolve) => (parsedResolve = resolve));
      const poke = (): void => {
        const f = q.wake;
        q.wake = null;
        f?.();
      };
      const gone = (): void => {
        const g = q.mainChunk;
        q.mainChunk = null;
        g?.(-1, null);
        const t = q.grown;
        q.grown = null;
        t?.(-1, null);
      };
      worker.on('message', (m: EvaluateWorkerMessage) => {
        if (m.type === 'parsed') {
          q.parseSeconds = m.seconds;
          parsedResolve(m.count);
        } else if (m.type === 'boxed') {
          // the worker is done with its blocks (jobBoxes does not wait for this)
        } else if (m.type === 'main-chunk') q.mainChunk?.(m.k, m.points);
        else if (m.type === 'grown') q.grown?.(m.k, m.tree);
        else if (m.type === 'grown-done') {
          const t = q.grown;
          q.grown = null;
          t?.(-1, null);
        }
        else if (m.type === 'main-done') {
          // done with range 0's chunks only (a tree it is growing goes on)
          const g = q.mainChunk;
          q.mainChunk = null;
          g?.(-1, null);
        }
        else if (m.type === 'chunk') q.chunks.push(m.bytes);
        else if (m.type === 'done') {
          q.done = true;
          this.workerTimes.locate += m.times.locate;
          this.workerTimes.law += m.times.law;
          this.workerTimes.format += m.times.format;
          this.workerCpu[w] = m.cpu;
        } else {
          q.error = new Error(`evaluate worker: ${m.message}`);
          parsedResolve(-1);
          gone();
        }
        poke();
      });
      worker.on('error', (e: Error) => {
        q.error = e;
        parsedResolve(-1);
        gone();
        poke();
      });
      worker.on('exit', (code) => {
        if (!q.done && !q.error) q.error = new Error(`evaluate worker ended (exit ${code}) before its points were done`);
        parsedResolve(-1);
        gone();
        poke();
      });
      worker.postMessage({ type: 'parse', text, start, end, n } satisfies EvaluateJob);
      return q;
    });
    // range 0 cut in chunks that the first worker takes after its own range and this thread once it
    // has the index (`ownParsed`), whichever is free first: this thread reads the table and builds
    // the index meanwhile, and waits for no parse it could do itself
    if (delegateOwn && this.queues.length > 0) {
      const [a, b] = this.ranges[0];
      this.ownChunks = splitLines(text, a, b, Array.from({ length: OWN_CHUNKS }, () => 1));
      this.claim = new Int32Array(new SharedArrayBuffer(4));
      const q = this.queues[0];
      this.chunkResults = new Array<RangePoints | null | undefined>(OWN_CHUNKS).fill(undefined);
      q.mainChunk = (k, p) => {
        if (k >= 0) this.chunkResults![k] = p;
        else this.workerChunksDone = true;
        const f = this.chunkWake;
        this.chunkWake = null;
        f?.();
      };
      q.worker.postMessage({ type: 'parse-main', chunks: this.ownChunks, claim: this.claim } satisfies EvaluateJob);
    }
    // workers beyond the ranges are not needed
    for (const w of pool.workers.slice(weights.length - 1)) void w.terminate();
  }

  /** with `delegateOwn`: range 0's chunks, the shared counter that hands them out, the first worker's results (undefined: not yet) */
  private ownChunks: [number, number][] | null = null;
  private claim: Int32Array | null = null;
  private chunkResults: (RangePoints | null | undefined)[] | null = null;
  private workerChunksDone = false;
  private chunkWake: (() => void) | null = null;

  /**
   * Range 0's points (file column order). Constructed with `delegateOwn`: the chunks the first worker
   * has not taken are parsed here, the others awaited (parsed here after all if that worker is gone
   * before sending them), then joined in order; else the range parsed here. Null when the range has a
   * line that is not a point.
   */
  async ownParsed(): Promise<RangePoints | null> {
    const chunks = this.ownChunks;
    if (!chunks) return parsePointsRange(this.text, this.ranges[0][0], this.ranges[0][1], this.n);
    const got = this.chunkResults!;
    const mine = new Array<RangePoints | null>(chunks.length).fill(null);
    const taken = new Uint8Array(chunks.length);
    for (let k = Atomics.add(this.claim!, 0, 1); k < chunks.length; k = Atomics.add(this.claim!, 0, 1)) {
      mine[k] = parsePointsRange(this.text, chunks[k][0], chunks[k][1], this.n);
      taken[k] = 1;
    }
    const parts: RangePoints[] = [];
    for (let k = 0; k < chunks.length; k++) {
      if (!taken[k]) {
        while (got[k] === undefined && !this.workerChunksDone) await new Promise<void>((resolve) => (this.chunkWake = resolve));
        mine[k] = got[k] === undefined ? parsePointsRange(this.text, chunks[k][0], chunks[k][1], this.n) : got[k]!;
      }
      const p = mine[k];
      if (!p) return null;
      parts.push(p);
    }
    return joinRangePoints(parts, this.n);
  }

  /**
   * Share the table's box LPs (`job`, in shared memory) with the workers: each takes blocks of it once
   * its parse is done (the message waits behind it), this thread takes blocks meanwhile
   * (`workOnBoxes`) until none is left to hand out. No wait for the workers: `jobBoxes` then computes
   * here any block a worker took and has not marked written yet (the same values: a worker still
   * writing it writes the same bits), so a worker still parsing never holds up the index.
   */
  shareBoxes(job: BoxJob): void {
    for (const q of this.queues) if (!q.error) q.worker.postMessage({ type: 'boxes', job } satisfies EvaluateJob);
    workOnBoxes(job);
  }

  /**
   * Grow the parts of `plan` (`planTree`) on this thread and the workers at once, then join them:
   * each thread takes the next part from a shared counter (the largest first: the plan lists them
   * so), so a worker still parsing takes none and holds nothing up. This thread waits only for the
   * parts a worker took; a worker gone before sending one leaves it to be grown here. A part's
   * subtree depends only on the part, so the index is the one `joinTree` makes of the parts grown
   * in one thread, whichever thread grew which.
   */
  async shareTree(plan: TreePlan): Promise<BoxIndex> {
    const K = plan.parts.length;
    const got: (GrownTree | undefined)[] = new Array<GrownTree | undefined>(K).fill(undefined);
    const claim = new Int32Array(new SharedArrayBuffer(4));
    let busy = 0;
    let wake: (() => void) | null = null;
    const live = K > 0 ? this.queues.filter((q) => !q.error) : [];
    for (const q of live) {
      busy++;
      q.grown = (k, t) => {
        if (k >= 0) got[k] = t!;
        else busy--;
        const f = wake;
        wake = null;
        f?.();
      };
      q.worker.postMessage({ type: 'tree', ctx: plan.ctx, parts: plan.parts, claim } satisfies EvaluateJob);
    }
    const mine = new Uint8Array(K);
    const grower = {};
    for (let k = Atomics.add(claim, 0, 1); k < K; k = Atomics.add(claim, 0, 1)) {
      got[k] = growPart(plan.ctx, plan.parts[k], grower);
      mine[k] = 1;
    }
    // the parts a worker took (each k below K is taken once: by this thread or by one worker)
    const waitFor = (): boolean => {
      for (let k = 0; k < K; k++) if (!mine[k] && got[k] === undefined) return true;
      return false;
    };
    while (busy > 0 && waitFor()) await new Promise<void>((resolve) => (wake = resolve));
    for (let k = 0; k < K; k++) got[k] ??= growPart(plan.ctx, plan.parts[k], grower);
    for (const q of live) q.grown = null;
    return joinTree(plan, got as GrownTree[]);
  }

  /** Whether every worker's range parsed (each line blank, a comment or n finite numbers); the total count of their points. */
  async parsed(): Promise<{ ok: boolean; count: number }> {
    const counts = await Promise.all(this.queues.map((q) => q.parsed));
    this.workerCounts = counts;
    this.parseSeconds = this.queues.reduce((a, q) => a + q.parseSeconds, 0);
    return { ok: counts.every((c) => c >= 0), count: counts.reduce((a, c) => a + Math.max(0, c), 0) };
  }

  private started = false;

  /**
   * Send the workers the context (the tree's state, the packed laws, the clamp, the header's column
   * order): they locate and format their ranges from then on (`lines` writes their chunks). Once;
   * `lines` calls it if the caller has not.
   */
  startWorkers(ctx: CsvContext, order: number[] | null, chunkPoints: number | undefined): void {
    if (this.started) return;
    const index = ctx.index;
    if (!index) throw new Error('the threaded CSV path needs the k-d tree');
    this.started = true;
    const state = index.state();
    for (const q of this.queues) q.worker.postMessage({ type: 'run', context: { ...ctx, index: state }, order, chunkPoints } satisfies EvaluateJob);
  }

  /**
   * The CSV: this thread's points (`own`, range 0, already parsed, file column order) first with the
   * header, then every worker's range in order, then `extra` (θ order, e.g. `--at`). The workers are
   * sent the context first, so they run while this thread writes its range. `order` is the header's
   * column order (null: the file's order is θ's).
   */
  async *lines(ctx: CsvContext, own: RangePoints, order: number[] | null, extra: Float64Array, chunkPoints: number | undefined, times: EvaluateTimes): AsyncGenerator<Uint8Array> {
    this.startWorkers(ctx, order, chunkPoints);
    try {
      orderRangePoints(own, this.n, order);
      yield* csvLines(ctx, { text: this.text, values: own.values, fileCount: own.count, from: own.from, to: own.to }, 0, own.count, true, chunkPoints, times, null);
      for (const q of this.queues) {
        for (;;) {
          if (q.error) throw q.error;
          const c = q.chunks.shift();
          if (c) yield c;
          else if (q.done) break;
          else await new Promise<void>((resolve) => (q.wake = resolve));
        }
      }
      const m = extra.length / Math.max(this.n, 1);
      if (m > 0) yield* csvLines(ctx, { text: new Uint8Array(0), values: extra, fileCount: 0, from: new Int32Array(0), to: new Int32Array(0) }, 0, m, false, chunkPoints, times, null);
    } finally {
      endEvaluatePool(this.pool);
    }
  }
}

/** A worker's state between its two messages: the points of its range once parsed. */
let own: RangePoints | null = null;
let ownText: Uint8Array = new Uint8Array(0);
let ownN = 0;

/** The main thread's chunks this worker is parsing (`parse-main`), null once none is left to take. */
let mainJob: { chunks: [number, number][]; claim: Int32Array } | null = null;

/** Take and parse the next chunk of `mainJob` and send it (true), or, none left, say so once (false). */
function mainStep(send: (m: EvaluateWorkerMessage, transfer?: ArrayBuffer[]) => void): boolean {
  const job = mainJob;
  if (!job) return false;
  const k = Atomics.add(job.claim, 0, 1);
  if (k >= job.chunks.length) {
    mainJob = null;
    send({ type: 'main-done' });
    return false;
  }
  const p = parsePointsRange(ownText, job.chunks[k][0], job.chunks[k][1], ownN);
  send({ type: 'main-chunk', k, points: p }, p ? [p.values.buffer as ArrayBuffer, p.from.buffer as ArrayBuffer, p.to.buffer as ArrayBuffer] : []);
  return true;
}

/**
 * Handle one message in a worker: `parse` its range (answered by `parsed`), then `run` (its lines
 * as byte chunks through `send`, then its stage seconds).
 */
export function handleEvaluateJob(job: EvaluateJob, send: (m: EvaluateWorkerMessage, transfer?: ArrayBuffer[]) => void): void {
  if (job.type === 'parse') {
    const t0 = performance.now();
    // a Buffer over the shared bytes: its latin1Slice is the fast decoding `Number` reads cells from
    ownText = Buffer.from(job.text.buffer, job.text.byteOffset, job.text.length);
    ownN = job.n;
    own = parsePointsRange(ownText, job.start, job.end, job.n);
    send({ type: 'parsed', count: own ? own.count : -1, seconds: (performance.now() - t0) / 1000 });
    return;
  }
  if (job.type === 'parse-main') {
    // one chunk per turn of the event loop: a message that came meanwhile (the box LPs, the tree's
    // parts: the main thread waits for those) is handled between two chunks, the chunks left after
    mainJob = job;
    const tick = (): void => {
      try {
        if (mainStep(send)) setImmediate(tick);
      } catch (e) {
        send({ type: 'error', message: e instanceof Error ? e.message : String(e) });
      }
    };
    tick();
    return;
  }
  if (job.type === 'tree') {
    const grower = {};
    for (let k = Atomics.add(job.claim, 0, 1); k < job.parts.length; k = Atomics.add(job.claim, 0, 1)) {
      const t = growPart(job.ctx, job.parts[k], grower);
      send({ type: 'grown', k, tree: t }, [t.axis, t.split, t.left, t.right, t.leafFrom, t.leafTo, t.ids, t.rowAt, t.rowIds, t.lbox, t.scratch].map((a) => a.buffer as ArrayBuffer));
    }
    send({ type: 'grown-done' });
    return;
  }
  if (job.type === 'boxes') {
    send({ type: 'boxed', blocks: workOnBoxes(job.job) });
    return;
  }
  if (!own) throw new Error('run before a clean parse');
  // the main thread's chunks still to parse first: it waits for them before its own lines
  while (mainStep(send));
  const ctx: CsvContext = { ...job.context, index: BoxIndex.fromState(job.context.index) };
  const times: EvaluateTimes = { index: 0, locate: 0, law: 0, format: 0 };
  orderRangePoints(own, ownN, job.order);
  const pts = { text: ownText, values: own.values, fileCount: own.count, from: own.from, to: own.to };
  for (const bytes of csvLines(ctx, pts, 0, own.count, false, job.chunkPoints, times, null)) send({ type: 'chunk', bytes }, [bytes.buffer as ArrayBuffer]);
  send({ type: 'done', times: { locate: times.locate, law: times.law, format: times.format }, cpu: threadCpuSeconds() });
}

/**
 * CPU seconds (user + system) of the calling thread so far, from /proc/thread-self/stat (Linux; clock
 * ticks of 1/100 s); NaN where that file is missing. For `--times`: the process's CPU clock adds up
 * every thread.
 */
export function threadCpuSeconds(): number {
  try {
    const st = readFileSync('/proc/thread-self/stat', 'latin1');
    const f = st.slice(st.lastIndexOf(')') + 2).split(' ');
    return (Number(f[11]) + Number(f[12])) / 100;
  } catch {
    return NaN;
  }
}
