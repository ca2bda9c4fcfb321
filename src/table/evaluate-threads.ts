/**
 * `tessera evaluate --threads N` (CSV path): the points split into N consecutive ranges, the first
 * written on this thread, the others on worker threads (src/table/evaluate-worker.ts), each sent the
 * k-d tree built here once (`BoxIndex.state()`), the packed laws and its own points and input bytes.
 * Every line depends only on its point (`csvLines`), so the ranges joined in order are the bytes of
 * the one-thread run. Node only (worker_threads).
 */
import { Worker } from 'node:worker_threads';
import { BoxIndex, type BoxIndexState } from './boxindex.js';
import { csvContext, csvLines, csvPoints, type CsvContext, type EvaluateTimes, type FlatPoints } from './points.js';
import type { EvaluateOptions } from './points.js';
import type { TableFile } from './format.js';

/** What a worker is sent: its points (numbered from 0) and the table's context with the tree as state. */
export interface EvaluateJob {
  context: Omit<CsvContext, 'index'> & { index: BoxIndexState };
  text: Uint8Array;
  values: Float64Array;
  fileCount: number;
  from: Int32Array;
  to: Int32Array;
  count: number;
  chunkPoints?: number;
}

/** What a worker sends back: byte chunks in order, then `done` with its stage seconds. */
export type EvaluateWorkerMessage = { type: 'chunk'; bytes: Uint8Array } | { type: 'done'; times: { locate: number; law: number; format: number } } | { type: 'error'; message: string };

/** Workers started ahead of the table read (they load their modules meanwhile); `evaluateCsvThreaded` uses or ends them. */
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

/** Fewer points than this per extra thread are not worth a worker (its start-up and warm-up). */
export const MIN_POINTS_PER_THREAD = 50_000;

/**
 * `evaluateCsvBytes` on `1 + pool.workers.length` threads: the same byte chunks, in order. Falls
 * back to one thread (ending the workers) when the table has no k-d tree (< 32 regions) or there are
 * fewer than MIN_POINTS_PER_THREAD points per thread. `times` gets this thread's stages; the
 * workers' come back in `workerTimes` (summed).
 */
export async function* evaluateCsvThreaded(
  table: TableFile,
  input: Uint8Array,
  points: FlatPoints,
  extra: number[][],
  pool: EvaluatePool,
  options: EvaluateOptions & { chunkPoints?: number; times?: EvaluateTimes; workerTimes?: { locate: number; law: number; format: number } } = {},
): AsyncGenerator<Uint8Array> {
  const n = table.dims.ntheta;
  if (points.ntheta !== n) throw new Error(`points have ${points.ntheta} entries, the table expects ${n}`);
  const times = options.times ?? { index: 0, locate: 0, law: 0, format: 0 };
  const ctx = csvContext(table, options, times, points.count + extra.length);
  const all = csvPoints(points, extra);
  const total = all.length / Math.max(n, 1);
  const text = points.count > 0 ? input : new Uint8Array(0);
  const pts = { text, values: all, fileCount: points.count, from: points.from, to: points.to };
  const threads = Math.min(1 + pool.workers.length, Math.floor(total / MIN_POINTS_PER_THREAD));
  if (!ctx.index || threads < 2) {
    endEvaluatePool(pool);
    yield* csvLines(ctx, pts, 0, total, true, options.chunkPoints, times, table.regions);
    return;
  }
  for (const w of pool.workers.slice(threads - 1)) void w.terminate();
  const used = pool.workers.slice(0, threads - 1);
  // consecutive ranges, this thread first (its chunks go out while the workers run)
  const bounds = Array.from({ length: threads + 1 }, (_, t) => Math.round((t * total) / threads));
  const state = ctx.index.state();
  const queues = used.map((worker, w) => {
    const k0 = bounds[w + 1];
    const k1 = bounds[w + 2];
    // the input bytes of this range's file points only, the cell offsets moved to match
    const f0 = Math.min(k1, points.count);
    let lo = text.length;
    let hi = 0;
    for (let q = k0 * n; q < f0 * n; q++)
      if (points.from[q] >= 0) {
        lo = Math.min(lo, points.from[q]);
        hi = Math.max(hi, points.to[q]);
      }
    if (lo > hi) lo = hi = 0;
    const from = points.from.slice(Math.min(k0, f0) * n, f0 * n);
    const to = points.to.slice(Math.min(k0, f0) * n, f0 * n);
    for (let q = 0; q < from.length; q++)
      if (from[q] >= 0) {
        from[q] -= lo;
        to[q] -= lo;
      }
    const job: EvaluateJob = {
      context: { ...ctx, index: state },
      // a copy (a Buffer's slice is a view of the whole file, which the transfer would take away)
      text: new Uint8Array(text.subarray(lo, hi)),
      values: all.slice(k0 * n, k1 * n),
      fileCount: Math.max(0, f0 - k0),
      from,
      to,
      count: k1 - k0,
      chunkPoints: options.chunkPoints,
    };
    const queue = { chunks: [] as Uint8Array[], done: false, error: null as Error | null, wake: null as (() => void) | null };
    const poke = (): void => {
      const f = queue.wake;
      queue.wake = null;
      f?.();
    };
    worker.on('message', (m: EvaluateWorkerMessage) => {
      if (m.type === 'chunk') queue.chunks.push(m.bytes);
      else if (m.type === 'done') {
        queue.done = true;
        if (options.workerTimes) {
          options.workerTimes.locate += m.times.locate;
          options.workerTimes.law += m.times.law;
          options.workerTimes.format += m.times.format;
        }
      } else queue.error = new Error(`evaluate worker: ${m.message}`);
      poke();
    });
    worker.on('error', (e: Error) => {
      queue.error = e;
      poke();
    });
    worker.on('exit', (code) => {
      if (!queue.done && !queue.error) queue.error = new Error(`evaluate worker ended (exit ${code}) before its points were done`);
      poke();
    });
    worker.postMessage(job, [job.text.buffer as ArrayBuffer, job.values.buffer as ArrayBuffer, job.from.buffer as ArrayBuffer, job.to.buffer as ArrayBuffer]);
    return queue;
  });
  try {
    yield* csvLines(ctx, pts, 0, bounds[1], true, options.chunkPoints, times, table.regions);
    for (const queue of queues) {
      for (;;) {
        if (queue.error) throw queue.error;
        const c = queue.chunks.shift();
        if (c) yield c;
        else if (queue.done) break;
        else await new Promise<void>((resolve) => (queue.wake = resolve));
      }
    }
  } finally {
    for (const w of used) void w.terminate();
  }
}

/** Run one job (in a worker): its lines as byte chunks through `send`, then its stage seconds. */
export function runEvaluateJob(job: EvaluateJob, send: (m: EvaluateWorkerMessage, transfer?: ArrayBuffer[]) => void): void {
  const ctx: CsvContext = { ...job.context, index: BoxIndex.fromState(job.context.index) };
  const times: EvaluateTimes = { index: 0, locate: 0, law: 0, format: 0 };
  const pts = { text: job.text, values: job.values, fileCount: job.fileCount, from: job.from, to: job.to };
  for (const bytes of csvLines(ctx, pts, 0, job.count, false, job.chunkPoints, times, null)) send({ type: 'chunk', bytes }, [bytes.buffer as ArrayBuffer]);
  send({ type: 'done', times: { locate: times.locate, law: times.law, format: times.format } });
}
