/**
 * One worker of `exploreThreaded` (src/table/threads.ts): runs the exploration with a share channel
 * over its port (regions from the other workers, read synchronously between candidates) and the
 * shared signal array (message counters, all-done and stop flags).
 */
import { parentPort, receiveMessageOnPort, workerData } from 'node:worker_threads';
import { solvePartition } from '../mpqp/solve.js';
import type { ShareChannel } from '../mpqp/types.js';
import { ownerOf, type ExploreRelay, type ExploreWorkerData, type ExploreWorkerEvent, type ExploreWorkerMessage } from './threads.js';

const d = workerData as ExploreWorkerData;
const W = d.count;
/**
 * Events wait here until the next flush (one message instead of one per event): when a region is
 * covered, before waiting, at the end, and at the latest 50 ms after the last flush.
 */
const outbox: ExploreWorkerEvent[] = [];
let lastFlush = performance.now();
const flush = (): void => {
  lastFlush = performance.now();
  if (outbox.length) parentPort!.postMessage({ type: 'batch', events: outbox.splice(0) } satisfies ExploreWorkerMessage);
};
const queue = (ev: ExploreWorkerEvent): void => {
  outbox.push(ev);
  if (performance.now() - lastFlush >= 50) flush();
};
const drain = (): ExploreRelay => {
  const out: ExploreRelay = [];
  for (;;) {
    const m = receiveMessageOnPort(d.port);
    if (!m) return out;
    for (const item of m.message as ExploreRelay) out.push(item);
  }
};
const stopped = (): boolean => Atomics.load(d.signal, W + 1) === 1;
const share: ShareChannel = {
  seeds: d.index === 0 && !(d.resume && d.resume.regions.length > 0),
  owns: (key) => ownerOf(key, W) === d.index,
  found: (region, box, from) => {
    queue({ type: 'found', region, box: { lo: Array.from(box.lo), hi: Array.from(box.hi) }, from });
  },
  seeded: () => {
    outbox.push({ type: 'seeded' });
    flush();
  },
  processed: (key) => {
    outbox.push({ type: 'processed', key });
    flush();
  },
  receive: drain,
  wait: () => {
    flush();
    for (;;) {
      const v = Atomics.load(d.signal, d.index);
      const got = drain();
      if (got.length) return got;
      if (Atomics.load(d.signal, W) === 1 || stopped()) return null;
      Atomics.wait(d.signal, d.index, v, 100);
    }
  },
};
const p = solvePartition(d.mpqp, {
  ...d.options,
  resume: d.resume ?? undefined,
  share,
  shouldStop: stopped,
  onProgress: d.progress ? (progress) => queue({ type: 'progress', progress }) : undefined,
});
flush();
parentPort!.postMessage({ type: 'done', stats: p.stats, work: p.work! } satisfies ExploreWorkerMessage);
