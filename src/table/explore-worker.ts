/**
 * One worker of `exploreThreaded` (src/table/threads.ts): runs the exploration with a share channel
 * over its port (regions from the other workers, read synchronously between candidates) and the
 * shared signal array (message counters, all-done and stop flags).
 */
import { parentPort, receiveMessageOnPort, workerData } from 'node:worker_threads';
import { solvePartition } from '../mpqp/solve.js';
import type { CriticalRegion, ShareChannel } from '../mpqp/types.js';
import { ownerOf, type ExploreWorkerData, type ExploreWorkerMessage } from './threads.js';

const d = workerData as ExploreWorkerData;
const W = d.count;
const post = (m: ExploreWorkerMessage): void => parentPort!.postMessage(m);
type Incoming = { region: CriticalRegion; box: { lo: number[]; hi: number[] } };
const drain = (): Incoming[] => {
  const out: Incoming[] = [];
  for (;;) {
    const m = receiveMessageOnPort(d.port);
    if (!m) return out;
    out.push(m.message as Incoming);
  }
};
const stopped = (): boolean => Atomics.load(d.signal, W + 1) === 1;
const share: ShareChannel = {
  seeds: d.index === 0 && !(d.resume && d.resume.regions.length > 0),
  owns: (key) => ownerOf(key, W) === d.index,
  found: (region, box) => post({ type: 'found', region, box: { lo: Array.from(box.lo), hi: Array.from(box.hi) } }),
  seeded: () => post({ type: 'seeded' }),
  processed: (key) => post({ type: 'processed', key }),
  receive: drain,
  wait: () => {
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
  onProgress: d.progress ? (progress) => post({ type: 'progress', progress }) : undefined,
});
post({ type: 'done', stats: p.stats, work: p.work! });
