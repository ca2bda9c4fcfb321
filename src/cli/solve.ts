import type { Command } from 'commander';
import { basename, dirname, join } from 'node:path';
import { Worker } from 'node:worker_threads';
import { loadProblem } from '../problem/index.js';
import type { Layout } from '../formulation/layout.js';
import type { MpqpProblem, Partition, Progress } from '../mpqp/types.js';
import { makeTable } from '../table/build.js';
import { joinPartitions } from '../mpqp/canonical.js';
import { writeTableFile } from '../table/file.js';
import { InputError } from '../io/errors.js';
import { formulateFeasible, setupSize } from '../table/solve.js';
import { checkOutputPath } from '../io/output.js';
import { EXIT } from './exit.js';
import { tol } from '../tol.js';
import type { SolveWorkerData } from './solve-worker.js';
import { createdNote, positive, SECONDS } from './common.js';

export function defaultTablePath(problemPath: string): string {
  const base = basename(problemPath).replace(/\.(json|ya?ml)$/i, '');
  return join(dirname(problemPath), `${base}.table.json`);
}

const progressLine = (p: Progress) => `\r  candidates ${p.candidates}  regions ${p.regions}  LPs ${p.lps}  ${p.elapsedSeconds.toFixed(1)} s `;

/**
 * The exploration in a worker thread; Ctrl-C on the main thread asks it to stop, and the promise
 * then resolves with the partial partition (stopReason 'interrupted').
 */
function solveInWorker(mpqp: MpqpProblem, options: SolveWorkerData['options'], onProgress?: (p: Progress) => void): Promise<Partition> {
  const stop = new Int32Array(new SharedArrayBuffer(4));
  const ts = import.meta.url.endsWith('.ts'); // run from source under tsx (tests)
  const worker = new Worker(new URL(ts ? './solve-worker.ts' : './solve-worker.js', import.meta.url), {
    workerData: { mpqp, options, progress: !!onProgress, stop } satisfies SolveWorkerData,
    execArgv: ts ? ['--import', 'tsx'] : undefined,
  });
  return new Promise((resolve, reject) => {
    let interrupts = 0;
    const onSigint = () => {
      interrupts++;
      Atomics.store(stop, 0, 1);
      // a second Ctrl-C, or an exploration that does not reach its next check within 3 s, ends it at once
      const hard = () => void worker.terminate().then(() => resolve(null as unknown as Partition));
      if (interrupts > 1) hard();
      else setTimeout(hard, 3000).unref();
    };
    process.on('SIGINT', onSigint);
    const done = () => process.off('SIGINT', onSigint);
    worker.on('message', (msg: { type: 'progress'; progress: Progress } | { type: 'done'; partition: Partition }) => {
      if (msg.type === 'progress') onProgress?.(msg.progress);
      else {
        done();
        resolve(msg.partition);
        void worker.terminate();
      }
    });
    worker.on('error', (e) => {
      done();
      reject(e);
    });
  });
}

export function register(program: Command): void {
  program
    .command('solve')
    .description('compute the critical-region partition of a problem file and write the table')
    .argument('<problem>', 'problem file (.json, .yaml or .yml)')
    .option('-o, --output <table>', 'table file to write, .json (default: <problem>.table.json beside the problem)')
    .option('--max-regions <n>', 'stop after n regions; the table is marked incomplete', positive('--max-regions', true))
    .option(`--time-limit ${SECONDS}`, 'stop after this many seconds; the table is marked incomplete', positive('--time-limit', false))
    .option('--lp <engine>', 'LP engine: kernel (typed-array, default) or reference (javascript-lp-solver)', 'kernel')
    .option('--setup-limit <MiB>', 'refuse problems whose condensed set-up is estimated above this many MiB (default 2048)', positive('--setup-limit', false), 2048)
    .option('--force', 'set up the problem even above --setup-limit')
    .option('-q, --quiet', 'print nothing but errors')
    .action(async (problemPath: string, opts: { output?: string; maxRegions?: number; timeLimit?: number; lp: string; quiet?: boolean; setupLimit: number; force?: boolean }) => {
      const tStart = performance.now();
      if (opts.lp !== 'kernel' && opts.lp !== 'reference')
        throw new InputError('(command line)', '--lp', `expected "kernel" or "reference", got "${opts.lp}"`);
      const out = opts.output ?? defaultTablePath(problemPath);
      const created = checkOutputPath(out, opts.output ? '-o' : 'default output', { kind: 'file', extensions: ['.json'], what: 'a JSON table' });
      const loaded = loadProblem(problemPath);
      // guard: the condensed problem's size is known from the dimensions before anything is built
      const size = setupSize(loaded);
      if (size) {
        if (size.bytes > opts.setupLimit * 2 ** 20) {
          if (!opts.force)
            throw new InputError(problemPath, 'horizon', `the condensed problem would have ${size.text}, above the --setup-limit of ${opts.setupLimit} MiB; shorten the horizon (or a control horizon), or pass --force`);
          if (!opts.quiet) process.stderr.write(`tessera: warning: ${size.text} (above --setup-limit ${opts.setupLimit} MiB, going on because of --force)\n`);
        }
        if (process.stderr.isTTY && !opts.quiet) process.stderr.write(`\r  setting up: ${size.text} \r`);
      }
      const formulation = formulateFeasible(loaded, problemPath);
      const { mpqp } = formulation;
      const live = process.stderr.isTTY && !opts.quiet;
      let shown = false;
      const t0 = performance.now();
      const setupSeconds = (t0 - tStart) / 1000;
      // the time limit covers set-up as well: the exploration gets what is left
      const timeLimit = opts.timeLimit === undefined ? undefined : Math.max(0, opts.timeLimit - setupSeconds);
      const partition = await solveInWorker(mpqp, { maxRegions: opts.maxRegions, timeLimit, lp: opts.lp as 'kernel' | 'reference' }, live
        ? (p) => {
            shown = true;
            process.stderr.write(progressLine(p));
          }
        : undefined);
      const seconds = (performance.now() - t0) / 1000 + setupSeconds;
      // the progress line ends with a newline when interrupted (it stays visible), else it is erased
      if (shown) process.stderr.write(partition && partition.stats.stopReason !== 'interrupted' ? '\r\x1b[K' : '\n');
      if (!partition || partition.stats.stopReason === 'interrupted') {
        const where = partition ? ` after ${partition.stats.regions} regions` : '';
        process.stderr.write(`tessera: interrupted: the solve of ${problemPath} was stopped${where} (${seconds.toFixed(1)} s); no table was written${opts.output ? ` to ${out}` : ''}\n`);
        process.exit(EXIT.interrupted);
      }
      const canonical = joinPartitions(mpqp, [partition]);
      const table = makeTable(loaded, formulation, canonical);
      writeTableFile(out, table);
      if (opts.quiet) return;
      if (created) createdNote(created);
      const s = canonical.stats;
      const lines = [
        `${table.name}: ${s.regions} regions, ${s.candidates} candidates, ${s.lps} LPs, ${s.qps} point QPs, ${seconds.toFixed(3)} s (${(s.regions / Math.max(seconds, 1e-9)).toFixed(0)} regions/s)`,
        `  θ = [${table.thetaNames.join(', ')}], ${loaded.model ? 'u' : 'law'} = [${table.inputNames.join(', ')}], ${layoutSummary(table.layout)}, ${mpqp.nc} constraint rows`,
        s.complete
          ? `  complete: yes — table written to ${out}`
          : `  complete: NO (stopped: ${s.stopReason}) — the table written to ${out} is INCOMPLETE and must not be deployed`,
      ];
      if (s.thinDropped)
        lines.push(`  note: ${s.thinDropped} region(s) of Chebyshev radius ≤ ${10 * tol.radius} met on the way are left out (thinner than the table's hole bound; the same in every run)`);
      if (s.unresolvedPieces > 0)
        lines.push(`  WARNING: ${s.unresolvedPieces} facet piece(s) could not be resolved into a full-dimensional region; run \`tessera gaps\` on the table`);
      process.stdout.write(lines.join('\n') + '\n');
    });
}

/** "8 free moves, 2 state slacks" — the z blocks and the features, in words. */
function layoutSummary(layout: Layout): string {
  const words: Record<string, string> = { moves: 'free moves', stateSlack: 'state slacks', outputSlack: 'output slacks', decision: 'decision variables' };
  const parts = layout.z.map((b) => `${b.size} ${words[b.kind]}`);
  parts.unshift(layout.formulation);
  if (layout.terminalSet) parts.push(`terminal set ${layout.terminalSet.rows} rows (determination index ${layout.terminalSet.index})`);
  return parts.join(', ');
}
