/**
 * One worker of the threaded CSV path of `tessera evaluate` (src/table/evaluate-threads.ts): started
 * before the table is read, it is sent its range of the points file (shared bytes) and parses it at
 * once, then the table's context (the k-d tree's state, the packed laws), and writes the range's CSV
 * lines as byte chunks back to the main thread, which ends it when its lines are in.
 */
import { parentPort } from 'node:worker_threads';
import { handleEvaluateJob, type EvaluateJob, type EvaluateWorkerMessage } from './evaluate-threads.js';

parentPort!.on('message', (job: EvaluateJob) => {
  try {
    handleEvaluateJob(job, (m: EvaluateWorkerMessage, transfer?: ArrayBuffer[]) => parentPort!.postMessage(m, transfer ?? []));
  } catch (e) {
    parentPort!.postMessage({ type: 'error', message: e instanceof Error ? e.message : String(e) } satisfies EvaluateWorkerMessage);
  }
});
