/**
 * One worker of `evaluateCsvThreaded` (src/table/evaluate-threads.ts): started before the table is
 * read, it waits for one job (its range of points, the k-d tree's state, the packed laws), writes the
 * range's CSV lines as byte chunks back to the main thread; with nothing left to wait for, it ends.
 */
import { parentPort } from 'node:worker_threads';
import { runEvaluateJob, type EvaluateJob, type EvaluateWorkerMessage } from './evaluate-threads.js';

parentPort!.once('message', (job: EvaluateJob) => {
  try {
    runEvaluateJob(job, (m: EvaluateWorkerMessage, transfer?: ArrayBuffer[]) => parentPort!.postMessage(m, transfer ?? []));
  } catch (e) {
    parentPort!.postMessage({ type: 'error', message: e instanceof Error ? e.message : String(e) } satisfies EvaluateWorkerMessage);
  }
});
