/**
 * One worker of `exploreThreaded` (src/table/threads.ts): explores the sub-boxes it is sent, one at
 * a time, each on its own (`solvePartition` with `within`), and reports the regions it builds and
 * the regions whose facets it covers. The shared signal asks it to stop. A worker of
 * `canonicalThreaded` computes one share of the canonical neighbours instead.
 */
import { parentPort, workerData } from 'node:worker_threads';
import { solvePartition } from '../mpqp/solve.js';
import { canonicalNeighbours } from '../mpqp/canonical.js';
import type { CriticalRegion } from '../mpqp/types.js';
import type { LpEngine } from '../mpqp/region.js';
import type { ExploreJob, ExploreWorkerData, ExploreWorkerEvent, ExploreWorkerMessage, NeighbourJob } from './threads.js';

const d = workerData as ExploreWorkerData;
const stopped = (): boolean => Atomics.load(d.signal, 0) === 1;

parentPort!.on('message', (job: ExploreJob | NeighbourJob) => {
  if (job.kind === 'neighbours') {
    // a share of the canonical form's neighbours step (`canonicalThreaded`)
    const lp: LpEngine = { lps: 0, reference: false };
    const lists = canonicalNeighbours(d.mpqp, job.regions as CriticalRegion[], job.boxes, lp, undefined, { index: job.index, count: job.count });
    parentPort!.postMessage({ lists, lps: lp.lps });
    return;
  }
  // events wait here until the next flush (one message instead of one per event): at most 50 ms apart, and at the end
  const outbox: ExploreWorkerEvent[] = [];
  let lastFlush = performance.now();
  const flush = (): void => {
    lastFlush = performance.now();
    if (outbox.length) parentPort!.postMessage({ type: 'batch', job: job.job, events: outbox.splice(0) } satisfies ExploreWorkerMessage);
  };
  const queue = (ev: ExploreWorkerEvent): void => {
    outbox.push(ev);
    if (performance.now() - lastFlush >= 50) flush();
  };
  const p = solvePartition(d.mpqp, {
    ...d.options,
    within: job.within,
    maxRegions: job.maxRegions,
    timeLimit: job.timeLimit,
    resume: job.resume ?? undefined,
    shouldStop: stopped,
    listener: {
      found: (region, box) => queue({ type: 'found', region, box: { lo: Array.from(box.lo), hi: Array.from(box.hi) } }),
      covered: (key) => queue({ type: 'processed', key }),
    },
    onProgress: (progress) => queue({ type: 'progress', progress }),
  });
  flush();
  parentPort!.postMessage({ type: 'done', job: job.job, stats: p.stats, work: p.work! } satisfies ExploreWorkerMessage);
});
