import type { Command } from 'commander';
import { basename, dirname, join } from 'node:path';
import { availableParallelism } from 'node:os';
import { loadProblem } from '../problem/index.js';
import type { Layout } from '../formulation/layout.js';
import type { ExplorationState, MpqpProblem, Partition, Progress } from '../mpqp/types.js';
import { canonicalThreaded, exploreThreaded, startThreadPool, tuneJitForThreads, type ThreadPool, type ThreadedOptions } from '../table/threads.js';
import { makeCheckpoint, makePart, parseCheckpointJson, parsePartIndex, type PartIndex, type SubBoxProgress } from '../table/part.js';
import { canonicalReserve, subBox, type GuessHints } from '../mpqp/canonical.js';
import { writeFileAtomic } from '../io/atomic.js';
import { readTextInput } from '../io/errors.js';
import { makeTable } from '../table/build.js';
import { writeTableFile } from '../table/file.js';
import { InputError } from '../io/errors.js';
import { formulateFeasible, setupSize } from '../table/solve.js';
import { checkOutputPath } from '../io/output.js';
import { EXIT } from './exit.js';
import { CLI, coverLines, createdNote, positive, SECONDS } from './common.js';
import { indexOption, sidecarIndexPath, writeIndexAfter } from './index-file.js';

export function defaultTablePath(problemPath: string): string {
  const base = basename(problemPath).replace(/\.(json|ya?ml)$/i, '');
  return join(dirname(problemPath), `${base}.table.json`);
}

const progressLine = (p: Progress) => `\r  candidates ${p.candidates}  regions ${p.regions}  LPs ${p.lps}  ${p.elapsedSeconds.toFixed(1)} s `;

/**
 * The exploration on worker threads (`exploreThreaded`). Ctrl-C on the main thread asks the workers
 * to stop; a second Ctrl-C, or workers that do not reach their next check within 3 s, end them at
 * once. Either way the promise resolves with what was found (stopReason 'interrupted'). A checkpoint
 * is written every `every` seconds while it runs, when asked for.
 */
async function explore(
  mpqp: MpqpProblem,
  options: ThreadedOptions,
  checkpoint: { write: (snap: { state: ExplorationState; subBoxes: SubBoxProgress }) => void; every: number } | null,
  sigint: Interrupts,
): Promise<{ partition: Partition; state: (() => { state: ExplorationState; subBoxes: SubBoxProgress }) | null; guesses: GuessHints }> {
  const run = exploreThreaded(mpqp, options);
  let interrupts = 0;
  const onSigint = () => {
    interrupts++;
    run.stop();
    if (interrupts > 1) run.terminate();
    else setTimeout(() => run.terminate(), 3000).unref();
  };
  process.on('SIGINT', onSigint);
  // a Ctrl-C during the set-up (this thread does not yield there) was only noted: stop at once
  if (sigint.count > 0) onSigint();
  const timer = checkpoint ? setInterval(() => checkpoint.write(run.snapshot()), 1000 * checkpoint.every) : null;
  try {
    const partition = await run.result;
    // the state is only asked for to write a checkpoint; without one, the run (and the union it
    // packed) is not kept beside the canonical form
    return { partition, state: checkpoint ? run.snapshot : null, guesses: run.guesses() };
  } finally {
    if (timer) clearInterval(timer);
    process.off('SIGINT', onSigint);
  }
}

/**
 * Ctrl-C over the whole command. The exploration's own handler (`explore`) also stops its workers at
 * once; the set-up, the canonical form and the assembly run on this thread without yielding, so a
 * Ctrl-C there is seen when that step ends, and the command then stops before writing anything: the
 * same message and exit code, never the default kill (which printed nothing and could leave a temp
 * file behind mid-write).
 */
interface Interrupts {
  count: number;
}

/**
 * Lets a SIGINT that arrived during synchronous work reach its handler: signals are read in the event
 * loop's poll phase, and two immediates in a row always have one poll phase between them (the first
 * may run in the check phase of the current iteration, before any poll).
 */
const signalsDelivered = (): Promise<void> => new Promise((r) => setImmediate(() => setImmediate(r)));

/** `<problem>.part-i-of-k.json` beside the problem. */
export function defaultPartPath(problemPath: string, part: PartIndex): string {
  const base = basename(problemPath).replace(/\.(json|ya?ml)$/i, '');
  return join(dirname(problemPath), `${base}.part-${part.index}-of-${part.count}.json`);
}

export function register(program: Command): void {
  program
    .command('solve')
    .description('compute the critical-region partition of a problem file and write the table')
    .argument('<problem>', 'problem file (.json, .yaml or .yml)')
    .option('-o, --output <table>', 'table file to write, .json (default: <problem>.table.json beside the problem)')
    .option('--max-regions <n>', 'stop after n regions; the table is marked incomplete (on several threads each sub-box explores up to its fixed share of n, so the same command gives the same table)', positive('--max-regions', true))
    .option(`--time-limit ${SECONDS}`, 'stop after this many seconds; the table is marked incomplete', positive('--time-limit', false))
    .option('--lp <engine>', 'LP engine: kernel (typed-array, default) or reference (javascript-lp-solver)', 'kernel')
    .option('--setup-limit <MiB>', 'refuse problems whose condensed set-up is estimated above this many MiB (default 2048)', positive('--setup-limit', false), 2048)
    .option('--force', 'set up the problem even above --setup-limit')
    .option('--threads <n>', `worker threads, each exploring its own sub-box of the parameter box (default: all cores, here ${availableParallelism()}); a complete table is the same bytes for every n`, positive('--threads', true))
    .option('--part <i/k>', 'explore only the i-th of k sub-boxes of the parameter box and write a part file (join k of them with `tessera join`)')
    .option('--checkpoint <file>', 'write the exploration state to this .json file every --checkpoint-every seconds, at a limit and at Ctrl-C')
    .option(`--checkpoint-every ${SECONDS}`, 'seconds between checkpoints (default 30)', positive('--checkpoint-every', false), 30)
    .option('--resume <file>', 'continue from a checkpoint of this problem (and go on writing it, unless --checkpoint names another file)')
    .option('--lean', 'lean table: per region the law of u(0), half-spaces, active set and neighbours, without the move sequence and the value function (about half the size; map --heat cost and the audit stability check need a full table)')
    .option('--index [file]', 'also write the point-location index (k-d tree) of the table, once the table is written: to FILE.index, or without FILE to <table>.index, where `tessera evaluate` finds it (the bytes `tessera evaluate --index` writes; built after the time limit\'s work, not bounded by it)')
    .option('-q, --quiet', 'print nothing but errors')
    .action(async (problemPath: string, opts: SolveCliOptions) => {
      // the workers start first: their start-up and module loading overlap reading and setting up
      // the problem, and they stay for the pilot, the exploration and the canonical neighbours
      const tStart = performance.now();
      const threads = opts.threads ?? availableParallelism();
      // on 2+ threads the isolates' JIT competes with the workers for the cores: cheaper compiles (`threadsV8Flags`)
      tuneJitForThreads(threads);
      const sigint: Interrupts = { count: 0 };
      const onSigint = () => void sigint.count++;
      process.on('SIGINT', onSigint);
      const pool = startThreadPool(threads);
      try {
        // the table written (a whole table, not a part) and the index file to write for it
        const written = await solveCommand(problemPath, opts, pool, tStart, sigint);
        // the index once solveCommand has returned: the solve's regions are no longer held while the
        // table is read back and its tree built (peak memory)
        if (written?.index) {
          await signalsDelivered();
          if (sigint.count > 0) {
            process.stderr.write(`tessera: interrupted: the table was written to ${written.table}; its index was not written (\`tessera evaluate ${written.table} --index${written.index === sidecarIndexPath(written.table) ? '' : ` ${written.index}`}\` writes it)\n`);
            process.exit(EXIT.interrupted);
          }
          writeIndexAfter(written.table, written.index, { quiet: opts.quiet, live: process.stderr.isTTY && !opts.quiet });
        }
      } finally {
        process.off('SIGINT', onSigint);
        void pool.terminate();
      }
    });
}

type SolveCliOptions = { output?: string; maxRegions?: number; timeLimit?: number; lp: string; quiet?: boolean; setupLimit: number; force?: boolean; threads?: number; part?: string; checkpoint?: string; checkpointEvery: number; resume?: string; lean?: boolean; index?: string | true };

/** The work of `tessera solve`; the table file written and the index file to write for it, or null when no whole table was written (a part file). */
async function solveCommand(problemPath: string, opts: SolveCliOptions, pool: ThreadPool, tStart: number, sigint: Interrupts): Promise<{ table: string; index: string | null } | null> {
  if (opts.lp !== 'kernel' && opts.lp !== 'reference')
    throw new InputError('(command line)', '--lp', `expected "kernel" or "reference", got "${opts.lp}"`);
  let part = opts.part === undefined ? null : parsePartIndex(opts.part);
  const out = opts.output ?? (part ? defaultPartPath(problemPath, part) : defaultTablePath(problemPath));
  const created = checkOutputPath(out, opts.output ? '-o' : 'default output', { kind: 'file', extensions: ['.json'], what: part ? 'a JSON part file' : 'a JSON table' });
  if (opts.index !== undefined && part) throw new InputError(CLI, '--index', 'a part file has no index; give --index to `tessera join` when joining the parts');
  const indexPath = indexOption(opts.index, out);
  const checkpointPath = opts.checkpoint ?? opts.resume;
  if (opts.checkpoint) checkOutputPath(opts.checkpoint, '--checkpoint', { kind: 'file', extensions: ['.json'], what: 'a JSON checkpoint' });
  const loaded = loadProblem(problemPath);
  let resume: ExplorationState | null = null;
  let resumeSubBoxes: SubBoxProgress | null = null;
  let lean = !!opts.lean;
  if (opts.resume) {
    const cp = parseCheckpointJson(readTextInput(opts.resume, 'checkpoint'), opts.resume, loaded);
    const same = (a: PartIndex | null, b: PartIndex | null) => (a ? `${a.index}/${a.count}` : 'the whole box') === (b ? `${b.index}/${b.count}` : 'the whole box');
    if (opts.part !== undefined && !same(cp.part, part))
      throw new InputError(opts.resume, 'part', `the checkpoint explores ${cp.part ? `part ${cp.part.index}/${cp.part.count}` : 'the whole box'}, not ${part ? `part ${part.index}/${part.count}` : 'the whole box'}`);
    if (opts.lean && !cp.lean) throw new InputError(opts.resume, 'lean', 'the checkpoint holds full regions; resume it without --lean (or start again with --lean)');
    if (cp.part && indexPath) throw new InputError(opts.resume, 'part', `the checkpoint explores part ${cp.part.index}/${cp.part.count}, which writes a part file: it has no index; give --index to \`tessera join\``);
    part = cp.part;
    resume = cp.state;
    resumeSubBoxes = cp.subBoxes ?? null;
    lean = cp.lean;
  }
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
  let last: Progress | null = null;
  const t0 = performance.now();
  const setupSeconds = (t0 - tStart) / 1000;
  // the time limit covers set-up and the canonical form as well: the exploration gets what is left
  // after set-up, less the canonical form's reserve (a part file has no canonical form)
  const timeLimit = opts.timeLimit === undefined ? undefined : Math.max(0, (opts.timeLimit - setupSeconds) * (part ? 1 : 1 - canonicalReserve));
  // the pool was sized from --threads (default: all cores) when the command started
  const threads = pool.workers.length;
  const within = part ? subBox(mpqp.box, part.index - 1, part.count) : undefined;
  const writeCheckpoint = (snap: { state: ExplorationState; subBoxes: SubBoxProgress }) => writeFileAtomic(checkpointPath!, JSON.stringify(makeCheckpoint(loaded, part, snap.state, lean, snap.subBoxes)));
  // the explored partition is let go once the canonical form is made (its regions' facet lists
  // would be held beside the canonical ones while the table is written)
  let partition: Partition | null;
  let state: Awaited<ReturnType<typeof explore>>['state'];
  let guesses: GuessHints | undefined;
  ({ partition, state, guesses } = await explore(
    mpqp,
    {
      threads,
      maxRegions: opts.maxRegions,
      timeLimit,
      lp: opts.lp as 'kernel' | 'reference',
      lean,
      within,
      resume,
      resumeSubBoxes,
      pool,
      // the workers end with the exploration (nothing after it runs on them), before its regions
      // are unpacked on this thread: the two copies are never held at once
      endPool: true,
      // the closure's guesses are built in the warm workers (a part file has no canonical form)
      guesses: !part,
      // the regions go only to the canonical form and the table text (a part file is written from
      // the regions' numbers): their law, moves and value are not unpacked again
      shedRendered: !part,
      onProgress: live
        ? (p) => {
            shown = true;
            last = p;
            process.stderr.write(progressLine(p));
          }
        : undefined,
    },
    checkpointPath ? { write: writeCheckpoint, every: opts.checkpointEvery } : null,
    sigint,
  ));
  const seconds = (performance.now() - t0) / 1000 + setupSeconds;
  // a bounded or interrupted run leaves a last checkpoint, and says how to continue
  const resumeHint = (): string => {
    if (!checkpointPath) return '';
    writeCheckpoint(state!());
    const o = opts.output ? ` -o ${out}` : '';
    return `tessera: checkpoint written to ${checkpointPath}; continue with: tessera solve ${problemPath} --resume ${checkpointPath}${o}\n`;
  };
  // the progress line ends with a newline when interrupted (it stays visible), else it is erased
  // (redrawn first when interrupted: the terminal may have echoed ^C after it)
  if (shown) process.stderr.write(partition.stats.stopReason !== 'interrupted' ? '\r\x1b[K' : `${progressLine(last!)}\n`);
  const interrupted = (regions: number, secondsSoFar: number): never => {
    process.stderr.write(`tessera: interrupted: the solve of ${problemPath} was stopped after ${regions} regions (${secondsSoFar.toFixed(1)} s); no ${part ? 'part file' : 'table'} was written${opts.output ? ` to ${out}` : ''}\n`);
    process.stderr.write(resumeHint());
    process.exit(EXIT.interrupted);
  };
  if (partition.stats.stopReason === 'interrupted') interrupted(partition.stats.regions, seconds);
  if (!partition.stats.complete && !opts.quiet) process.stderr.write(resumeHint());
  else if (!partition.stats.complete) resumeHint();
  // the workers are done with a part (and below, after the canonical neighbours): end them before
  // the file is assembled, so their heaps are not held beside it (peak memory)
  if (part) {
    await pool.terminate();
    await signalsDelivered();
    if (sigint.count > 0) interrupted(partition.stats.regions, (performance.now() - tStart) / 1000);
    writeFileAtomic(out, JSON.stringify(makePart(loaded, mpqp.box, part, partition, lean)));
    if (opts.quiet) return null;
    if (created) createdNote(created);
    const s = partition.stats;
    process.stdout.write(
      `${loaded.name}: part ${part.index} of ${part.count}: ${s.regions} regions meet its sub-box, ${s.lps} LPs, ${seconds.toFixed(3)} s\n` +
        (s.complete ? `  complete: yes — part file written to ${out}; join all ${part.count} with: tessera join PART... -o TABLE\n` : `  complete: NO (stopped: ${s.stopReason}) — the part file written to ${out} is INCOMPLETE\n`) +
        coverLines(s).map((l) => `${l}\n`).join(''),
    );
    return null;
  }
  // the canonical form: both its steps are bounded by the same time limit (a cut one marks the
  // table incomplete) and show progress, with the time left; this thread does it alone (shares on
  // the workers measured slower: `CanonicalThreadedOptions`), so the workers end first, their heaps
  // freed
  await pool.terminate();
  const tCanonical = performance.now();
  const left = (): string => (opts.timeLimit === undefined ? '' : `, ${Math.max(0, opts.timeLimit - (performance.now() - tStart) / 1000).toFixed(1)} s left of the time limit`);
  const exploredComplete = partition.stats.complete;
  const canonical = await canonicalThreaded(mpqp, partition, threads, {
    shouldStop: () => opts.timeLimit !== undefined && (performance.now() - tStart) / 1000 >= opts.timeLimit,
    guesses,
    onProgress: live ? (step, done, total) => process.stderr.write(`\r\x1b[K  canonical form: ${step === 'closing' ? `closing under neighbour guesses ${done}/${total} regions` : `neighbours ${done}/${total} facets`}${left()} `) : undefined,
  });
  partition = null;
  guesses = undefined;
  if (live) process.stderr.write('\r\x1b[K');
  // an exploration that finished but whose canonical form was cut: the checkpoint resumes it too
  if (exploredComplete && !canonical.stats.complete) {
    const hint = resumeHint();
    if (!opts.quiet) process.stderr.write(hint);
  }
  // a Ctrl-C during the canonical form (this thread, no yielding) is seen here, before anything is written
  await signalsDelivered();
  if (sigint.count > 0) interrupted(canonical.stats.regions, (performance.now() - tStart) / 1000);
  const tTable = performance.now();
  const table = makeTable(loaded, formulation, canonical, { lean });
  writeTableFile(out, table);
  const tEnd = performance.now();
  if (opts.quiet) return { table: out, index: indexPath };
  if (created) createdNote(created);
  const s = canonical.stats;
  const lines = [
    `${table.name}: ${s.regions} regions, ${s.candidates} candidates, ${s.lps} LPs, ${s.qps} point QPs, ${seconds.toFixed(3)} s (${(s.regions / Math.max(seconds, 1e-9)).toFixed(0)} regions/s)`,
    // the first line's seconds are set-up and exploration (regions/s are about those); this one adds what came after
    `  time: set-up and exploration ${seconds.toFixed(1)} s, canonical form ${((tTable - tCanonical) / 1000).toFixed(1)} s, table assembled and written ${((tEnd - tTable) / 1000).toFixed(1)} s; ${((tEnd - tStart) / 1000).toFixed(1)} s in all`,
    `  θ = [${table.thetaNames.join(', ')}], ${loaded.model ? 'u' : 'law'} = [${table.inputNames.join(', ')}], ${layoutSummary(table.layout)}, ${mpqp.nc} constraint rows`,
    ...(opts.lean ? [`  lean table: u(0) laws, half-spaces, active sets and neighbours only (no move sequence, no value function)`] : []),
    s.complete
      ? `  complete: yes — table written to ${out}`
      : `  complete: NO (stopped: ${s.stopReason}) — the table written to ${out} is INCOMPLETE and must not be deployed`,
    ...(s.neighboursCut ? [`  neighbour lists: NOT finished — the time limit ended the canonical form's neighbours step (${canonical.neighbourWork?.clustersDone ?? 0} of ${canonical.neighbourWork?.clusters ?? 0} facet clusters done; the other facets list no neighbours); resume or raise --time-limit`] : []),
  ];
  lines.push(...coverLines(s));
  process.stdout.write(lines.join('\n') + '\n');
  return { table: out, index: indexPath };
}

/** "8 free moves, 2 state slacks" — the z blocks and the features, in words. */
function layoutSummary(layout: Layout): string {
  const words: Record<string, string> = { moves: 'free moves', stateSlack: 'state slacks', outputSlack: 'output slacks', decision: 'decision variables' };
  const parts = layout.z.map((b) => `${b.size} ${words[b.kind]}`);
  parts.unshift(layout.formulation);
  if (layout.terminalSet) parts.push(`terminal set ${layout.terminalSet.rows} rows (determination index ${layout.terminalSet.index})`);
  return parts.join(', ');
}
