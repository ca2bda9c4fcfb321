/**
 * Runs the exploration off the main thread, so that the main thread stays free to answer Ctrl-C
 * (a signal handler cannot run while a synchronous solve holds the event loop). The main thread
 * sets the shared stop flag; the exploration checks it between candidates and returns its
 * partial result, marked `interrupted`.
 */
import { parentPort, workerData } from 'node:worker_threads';
import { solvePartition } from '../mpqp/solve.js';
import type { MpqpProblem, SolveOptions } from '../mpqp/types.js';

export interface SolveWorkerData {
  mpqp: MpqpProblem;
  options: Pick<SolveOptions, 'maxRegions' | 'timeLimit' | 'lp' | 'lean'>;
  progress: boolean;
  /** Int32Array over a SharedArrayBuffer: [0] = 1 asks the exploration to stop */
  stop: Int32Array;
}

const data = workerData as SolveWorkerData;
const partition = solvePartition(data.mpqp, {
  ...data.options,
  shouldStop: () => Atomics.load(data.stop, 0) === 1,
  onProgress: data.progress ? (p) => parentPort!.postMessage({ type: 'progress', progress: p }) : undefined,
});
parentPort!.postMessage({ type: 'done', partition });
