/**
 * tessera for Node: the whole pure core (src/core.ts) plus reading and writing files. The CLI is a
 * thin layer over these functions: parse options → call → write atomically → print.
 *
 * @example
 * ```ts
 * import { loadProblem, solveProblem, writeTableFile, evaluateTable } from 'tessera';
 * const { table } = solveProblem(loadProblem('axis.yaml'));
 * writeTableFile('axis.table.json', table);
 * console.log(evaluateTable(table, [0.3, -0.2]).u);
 * ```
 */
export * from './core.js';

// files (Node only)
export { loadProblem } from './problem/load.js';
export { readTableFile, writeTableFile } from './table/file.js';
export { readTreeFile } from './emit/tree-file.js';
export { writeFileAtomic } from './io/atomic.js';
export { exploreThreaded, startThreadPool, type ThreadedOptions, type ThreadedExploration, type ThreadPool } from './table/threads.js';
export { readTextInput } from './io/errors.js';
export { staticPage, serveViewer, viewerPayload, viewerAsset, type ViewerData } from './io/viewer.js';
