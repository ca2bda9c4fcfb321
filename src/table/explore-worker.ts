/**
 * One worker of `exploreThreaded` (src/table/threads.ts). It is started before the problem is
 * known and is handed it by a `problem` message; then it answers jobs one at a time: a pilot
 * (distinct active sets on mid-planes, to choose the cut), a sub-box to explore on its own
 * (`solvePartition` with `within`, reporting the regions it builds and the regions whose facets it
 * covers; when it completes, the closure guesses and the twin facets among its regions, hints for
 * the canonical form), or a share of the canonical neighbours (`canonicalThreaded`). The shared signal asks it
 * to stop exploring.
 */
import { parentPort, workerData } from 'node:worker_threads';
import { solvePartition } from '../mpqp/solve.js';
import { buildGuesses, canonicalNeighbours, twinPairs, zeroNeighbourCounts } from '../mpqp/canonical.js';
import { midPlaneCount } from '../mpqp/split.js';
import type { CriticalRegion } from '../mpqp/types.js';
import { RegionBatch } from './region-store.js';
import type { LpEngine } from '../mpqp/region.js';
import type { ExploreJob, ExploreWorkerData, ExploreWorkerEvent, ExploreWorkerMessage, NeighbourJob, PilotJob, ProblemMessage } from './threads.js';

const d = workerData as ExploreWorkerData;
const stopped = (): boolean => Atomics.load(d.signal, 0) === 1;
let problem: ProblemMessage | null = null;
/** what a region reported to the main thread keeps here in place of its law and Chebyshev ball (see `flush`) */
const shedLaw = Object.freeze({ F: [], g: [] }) as unknown as CriticalRegion['law'];
const shedBall = Object.freeze({ center: [], radius: 0 }) as unknown as CriticalRegion['chebyshev'];

parentPort!.on('message', (job: ProblemMessage | PilotJob | ExploreJob | NeighbourJob) => {
  if (job.kind === 'problem') {
    problem = job;
    return;
  }
  if (!problem) throw new Error(`explore worker: a ${job.kind} job came before the problem`);
  const mpqp = problem.mpqp;
  if (job.kind === 'pilot') {
    parentPort!.postMessage({ type: 'pilot', counts: job.axes.map((a) => midPlaneCount(mpqp, job.box, a, job.samples)) } satisfies ExploreWorkerMessage);
    return;
  }
  if (job.kind === 'neighbours') {
    // a share of the canonical form's neighbours step (`canonicalThreaded`)
    const lp: LpEngine = { lps: 0, reference: false };
    const counts = zeroNeighbourCounts();
    const lists = canonicalNeighbours(mpqp, job.regions as CriticalRegion[], job.boxes, lp, undefined, { index: job.index, count: job.count }, { shouldStop: stopped, counts });
    parentPort!.postMessage({ type: 'neighbours', lists, lps: lp.lps, counts } satisfies ExploreWorkerMessage);
    return;
  }
  // events wait here until the next flush (one message instead of one per event): at most 50 ms apart, and at the end
  const outbox: ExploreWorkerEvent[] = [];
  const batch = new RegionBatch();
  let lastFlush = performance.now();
  const flush = (): void => {
    lastFlush = performance.now();
    if (!outbox.length) return;
    const events = outbox.splice(0);
    // the regions go packed into two typed arrays whose buffers are transferred (`RegionBatch`, the
    // main thread's `RegionStore` records): cloning them as objects cost this thread ~6 % of its
    // exploration and the main thread as much again to unpack and pack them
    const sent: CriticalRegion[] = [];
    for (let e = 0; e < events.length; e++) {
      const ev = events[e];
      if (ev.type !== 'found') continue;
      sent.push(ev.region);
      if (batch.push(ev.region, ev.box)) events[e] = { type: 'packed', key: ev.region.activeSet.join(',') };
    }
    const packed = batch.take();
    parentPort!.postMessage({ type: 'batch', job: job.job, events, packed } satisfies ExploreWorkerMessage, packed ? [packed.ints.buffer as ArrayBuffer, packed.floats.buffer as ArrayBuffer] : []);
    // the main thread keeps the regions sent, laws and Chebyshev balls included (the message is a
    // copy made above); this thread's regions only feed its exploration, which reads neither again
    // (the ball of a region is read only as it is built, and of regions resumed): both are let go,
    // ~350 B a region (this job's partition is not sent, only its counters)
    for (const R of sent) {
      R.law = shedLaw;
      R.chebyshev = shedBall;
    }
  };
  const queue = (ev: ExploreWorkerEvent): void => {
    outbox.push(ev);
    if (performance.now() - lastFlush >= 50) flush();
  };
  const jobStart = performance.now();
  const p = solvePartition(mpqp, {
    ...problem.options,
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
  // a finished sub-box also builds the canonical form's closure guesses across its regions' facets
  // (`buildGuesses`): this isolate has the region code warm, the main thread would compile it anew
  // for them (the main thread's closure step, loaded: glider-2d-n40 0.34 → 0.19 s CPU, boom-4d-n12
  // 0.81 → 0.46–0.57 s); hints only, the table is the same bytes
  let guesses: ReturnType<typeof buildGuesses> | undefined;
  let twins: { keys: string[]; facets: number[] } | undefined;
  if (job.guesses && p.stats.complete) {
    // within the job's time limit (the main thread's canonical form builds whatever is not hinted)
    const late = (): boolean => stopped() || (job.timeLimit !== undefined && (performance.now() - jobStart) / 1000 >= job.timeLimit);
    guesses = buildGuesses(mpqp, p.regions, !!problem.options.lean, { lps: 0, reference: false }, late);
    // and the twin facets among its regions (`twinPairs`): the neighbours step pairs them without
    // building their vertex lists again on the main thread (hints only: the same table)
    if (job.twinsFrom !== undefined && p.boxes && !late()) {
      const quads = twinPairs(mpqp, p.regions, p.boxes, job.twinsFrom, late);
      const keys: string[] = [];
      const facets: number[] = [];
      for (let t = 0; t + 3 < quads.length; t += 4) {
        keys.push(p.regions[quads[t]].activeSet.join(','), p.regions[quads[t + 2]].activeSet.join(','));
        facets.push(quads[t + 1], quads[t + 3]);
      }
      twins = { keys, facets };
    }
  }
  parentPort!.postMessage({ type: 'done', job: job.job, stats: p.stats, work: p.work!, guesses, twins } satisfies ExploreWorkerMessage);
});
