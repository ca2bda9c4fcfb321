import type { Command } from 'commander';
import { readTableFile } from '../table/file.js';
import { InputError, readBytesInput, readTextInput } from '../io/errors.js';
import { hasInputLimits } from '../table/clamp.js';
import { CLI, positive } from './common.js';
import { endEvaluatePool, MIN_BYTES_PER_THREAD, startEvaluatePool, threadCpuSeconds, ThreadedCsv } from '../table/evaluate-threads.js';
import { csvContext, evaluateCsvBytes, evaluatePoints, parsePointsCsv, parsePointsFlat, pointsFileHead, pointsHeaderColumns, SCAN_BELOW_POINTS, type CsvContext, type EvaluateTimes, type FlatPoints } from '../table/points.js';
import { closeSync, existsSync, fstatSync, openSync, readFileSync, readSync, statSync } from 'node:fs';
import { availableParallelism } from 'node:os';
import { checkOutputPath } from '../io/output.js';
import { writeFileAtomic } from '../io/atomic.js';
import { BoxIndex, indexFromBytes, indexToBytes, INDEX_FILE_TAG, planTree } from '../table/boxindex.js';
import { tableBoxPad, tableLocator, tableLocatorOptions } from '../table/locator.js';
import { boxJob, jobBoxes } from '../table/shared-boxes.js';
import { bytesSha256, checkIndexPath, currentIndex, indexKey, indexMatches, sidecarIndexPath, tableIndex } from './index-file.js';
import type { TableFile } from '../table/format.js';
import { isFullTable, readTableLaws, type EvaluatedTable } from '../table/evaluate-table.js';

/** Process CPU seconds so far (user + system). */
const cpuSeconds = (): number => {
  const u = process.cpuUsage();
  return (u.user + u.system) / 1e6;
};

/**
 * Wall and CPU seconds per stage of one run (`--times`): the first stage, start-up, runs from the
 * process's start (module loading, option parsing); each `lap` closes the stage running since the last.
 */
class StageClock {
  private wall = performance.now() / 1000;
  private cpu = cpuSeconds();
  readonly stages: [string, number, number][] = [['start-up', this.wall, this.cpu]];
  /** close the stage `name`; `lessWall`/`lessCpu`: seconds within it that another stage reports */
  lap(name: string, lessWall = 0, lessCpu = 0): void {
    const w = performance.now() / 1000;
    const c = cpuSeconds();
    this.stages.push([name, w - this.wall - lessWall, c - this.cpu - lessCpu]);
    this.wall = w;
    this.cpu = c;
  }
  /** the line --times prints: every stage as wall/CPU seconds, the totals and the points per second */
  line(points: number): string {
    const wall = performance.now() / 1000;
    const cpu = cpuSeconds();
    const f = (x: number): string => x.toFixed(2);
    const parts = this.stages.map(([n, w, c]) => `${n} ${f(w)}/${f(c)}`).join(', ');
    return `tessera: times (wall/CPU seconds): ${parts}; total ${f(wall)}/${f(cpu)} for ${points} points = ${(points / wall / 1e6).toFixed(3)} M points/s wall (${(points / cpu / 1e6).toFixed(3)} M per CPU second)\n`;
  }
}

/** The points CSV of `path` in θ order (header columns matched by name: the contract's rule). */
export function readPointsCsv(path: string, thetaNames: string[]): number[][] {
  return parsePointsCsv(readTextInput(path, 'points file'), path, thetaNames);
}

function parseAt(text: string, ntheta: number): number[] {
  const cells = text.split(',').map((c) => c.trim());
  const nums = cells.map(Number);
  if (cells.length !== ntheta) throw new InputError(CLI, '--at', `expected ${ntheta} comma-separated values, got ${cells.length}`);
  nums.forEach((v, k) => {
    if (cells[k] === '' || !Number.isFinite(v)) throw new InputError(CLI, '--at', `"${cells[k]}" is not a finite number`);
  });
  return nums;
}

export function register(program: Command): void {
  program
    .command('evaluate')
    .description('evaluate the table law u(0) at given parameter points')
    .argument('<table>', 'table file written by `tessera solve`')
    .option('--points <csv>', 'CSV file: one θ per line; an optional header line names every θ entry once, in any order')
    .option('--at <values>', 'one point, comma-separated, e.g. --at 1.2,-0.3')
    .option('--clamp', "saturate u(0) to the table's input limits (inputLimits)")
    .option('--json', 'print JSON instead of CSV')
    .option('-q, --quiet', 'print the values only: no warnings')
    .option('--threads <n>', 'threads for the CSV output of --points (default: every core): the data lines split into n consecutive ranges, each located and formatted by its own thread (parsed by the workers while the table is read; the k-d tree built once, its box LPs shared); the same bytes for every n', positive('--threads', true))
    .option('--index [file]', 'keep the point-location index (k-d tree) of the table in FILE.index (without FILE: <table>.index): read it when it is the index of this table file (its SHA-256), else build it and write it there; a later run then skips the build')
    .option('--no-index', 'do not read <table>.index (without --index, evaluate reads it when it is there and is the index of this table file, e.g. written by `tessera solve --index`; it never writes it)')
    .option('--times', 'print to stderr where the time went: wall and CPU seconds per stage (start-up, table, points, index, locate, law, format, write) and points per second')
    .action(async (tablePath: string, cliOpts: EvaluateCliOpts) => {
      // --index FILE, or --index alone (<table>.index): read, or built and written
      const indexPath = typeof cliOpts.index === 'string' ? cliOpts.index : cliOpts.index === true ? sidecarIndexPath(tablePath) : undefined;
      // a bad --index path fails before any work
      if (indexPath) checkIndexPath(indexPath, '--index', 'tessera evaluate');
      // neither --index nor --no-index: <table>.index is read when it is there and is this table's
      // index (checked against the table file's SHA-256 like --index), never written
      const sidecar = cliOpts.index === undefined && existsSync(sidecarIndexPath(tablePath)) ? sidecarIndexPath(tablePath) : undefined;
      const opts: EvaluateOpts = { ...cliOpts, index: indexPath, sidecar };
      const clock = opts.times ? new StageClock() : null;
      // with threads, the workers start now: they load their modules and parse their ranges of the
      // points file while this thread reads the table
      const threads = opts.threads ?? availableParallelism();
      const plan = threads > 1 && opts.points && !opts.json ? startThreaded(opts.points, tablePath, threads, (indexPath && existsSync(indexPath)) || sidecar ? 'read' : 'build') : null;
      try {
        await evaluateAction(tablePath, opts, clock, plan);
      } finally {
        if (plan) endEvaluatePool(plan.pool);
      }
    });
}

/** The options of `tessera evaluate` as commander gives them (`index`: a file, true for `--index` alone, false for `--no-index`). */
interface EvaluateCliOpts {
  points?: string;
  at?: string;
  json?: boolean;
  clamp?: boolean;
  quiet?: boolean;
  times?: boolean;
  threads?: number;
  index?: string | boolean;
}

/** The options of a run: `index` the index file to read or write (--index), `sidecar` the <table>.index to read if current (neither --index nor --no-index given, and the file is there). */
interface EvaluateOpts extends Omit<EvaluateCliOpts, 'index'> {
  index?: string;
  sidecar?: string;
}

/** A threaded CSV run under way: the workers parsing their ranges of the file's bytes (shared memory). */
interface ThreadedPlan {
  pool: ReturnType<typeof startEvaluatePool>;
  csv: ThreadedCsv;
  head: NonNullable<ReturnType<typeof pointsFileHead>>;
  /** the index is to be built (no --index file to read): range 0 parsed by the first worker, the box LPs shared */
  build: boolean;
}

/**
 * Start the threaded CSV path when the points file is large enough for `threads` threads (at least
 * MIN_BYTES_PER_THREAD bytes each): the workers start, the file is read into shared memory and each
 * worker is sent its range of data lines. This thread's range is smaller by the estimated cost of
 * what it does alone (reading the table, the index, writing). Null (nothing started) when the file is
 * small, cannot be read (the one-thread path then reports it) or has no data line.
 */
function startThreaded(pointsPath: string, tablePath: string, threads: number, index: 'read' | 'build'): ThreadedPlan | null {
  let size: number;
  let tableSize: number;
  try {
    size = statSync(pointsPath).size;
    tableSize = statSync(tablePath).size;
  } catch {
    return null;
  }
  const T = Math.min(threads, Math.floor(size / MIN_BYTES_PER_THREAD));
  if (T < 2) return null;
  const pool = startEvaluatePool(T - 1);
  let bytes: Uint8Array;
  try {
    bytes = readShared(pointsPath);
  } catch {
    endEvaluatePool(pool);
    return null;
  }
  const head = pointsFileHead(bytes);
  if (!head) {
    endEvaluatePool(pool);
    return null;
  }
  // seconds per byte of points (parse, locate, law, format: ~60 ns at 10⁶ 4-D points of 7 digits)
  // and what this thread does alone: the table and index (read in full and built: ~35 + 170 ns per
  // byte of table; with an --index file there: the table's bytes hashed, its laws read and the index
  // file read, ~12 ns per byte of table), the writes (~2 ns per byte of points); a worker's module load
  const perByte = 60e-9;
  const B = size - head.dataStart;
  if (index === 'build') {
    // the index is built here while the workers, done with their parse, wait for it (they share only
    // its box LPs): every thread then has the same share of lines to locate and format, and the first
    // worker parses this thread's range too, so that the index is not delayed by it
    const csv = new ThreadedCsv(pool, bytes, head.dataStart, head.cells.length, Array.from({ length: T }, () => 1), true);
    return { pool, csv, head, build: true };
  }
  const alone = tableSize * 12e-9 + size * 2e-9;
  const workerStart = 0.1;
  const own = Math.max(0, (B + ((workerStart - alone) * (T - 1)) / perByte) / T);
  const weights = [own, ...Array.from({ length: T - 1 }, () => (B - own) / (T - 1))];
  const csv = new ThreadedCsv(pool, bytes, head.dataStart, head.cells.length, weights);
  return { pool, csv, head, build: false };
}

/** A file's bytes in shared memory (a Buffer over a SharedArrayBuffer), so that worker threads read them without a copy. */
function readShared(path: string): Buffer {
  const fd = openSync(path, 'r');
  try {
    const size = fstatSync(fd).size;
    const buf = Buffer.from(new SharedArrayBuffer(size));
    let at = 0;
    while (at < size) {
      const got = readSync(fd, buf, at, size - at, at);
      if (got <= 0) break;
      at += got;
    }
    return buf.subarray(0, at);
  } finally {
    closeSync(fd);
  }
}

/** The command's work once the workers (if any) are started and parsing (the caller ends them in any case). */
async function evaluateAction(tablePath: string, opts: EvaluateOpts, clock: StageClock | null, plan: ThreadedPlan | null): Promise<void> {
  // with --index or <table>.index there (CSV output): the table's laws only, when the index file is this table file's index
  const readIndex = opts.index ?? opts.sidecar;
  let known = readIndex && !opts.json ? lawsWithIndex(tablePath, readIndex, clock) : null;
  const table: EvaluatedTable = known?.table ?? readTableFile(tablePath);
  // <table>.index not taken above (another layout of the table, --json, or not this table's index):
  // used when it is this table's index, else left alone with a note (a tree is built for the run as without it)
  if (!known && opts.sidecar) {
    const cur = currentIndex(fullTable(table), tablePath, opts.sidecar);
    if ('index' in cur) known = { table, index: cur.index };
    else if (!opts.quiet) process.stderr.write(`tessera: note: ${opts.sidecar} not used: ${cur.why} (tessera evaluate --index writes it again)\n`);
  }
  clock?.lap('table');
  if (!opts.points && !opts.at) throw new InputError(CLI, '--points', 'give --points FILE.csv or --at v1,v2,…');
  if (plan && (await threadedAction(table, known?.index ?? null, tablePath, opts, clock, plan))) return;
  const points: number[][] = [];
  const empty: FlatPoints = { count: 0, ntheta: table.dims.ntheta, values: new Float64Array(0), from: new Int32Array(0), to: new Int32Array(0) };
  // the file's bytes: read by a byte scan, plain cells copied to the output as they are
  const bytes = opts.points ? readBytesInput(opts.points, 'points file') : new Uint8Array(0);
  const flat = opts.points ? parsePointsFlat(bytes, opts.points, table.thetaNames) : empty;
  if (opts.at) points.push(parseAt(opts.at, table.dims.ntheta));
  clock?.lap('points');
  const clamp = !!opts.clamp;
  // the index from --index (read, or built and written); its time goes to the index stage
  let index: BoxIndex | null = null;
  let indexWall = 0;
  let indexCpu = 0;
  // without an index file (CSV, enough points for a tree): a tree for this run only (`oneRun`)
  const oneRun = !known && !opts.index && !opts.json && flat.count + points.length >= SCAN_BELOW_POINTS && isFullTable(table) && table.regions.length >= 32;
  if (known || opts.index || oneRun) {
    const w0 = performance.now();
    const c0 = cpuSeconds();
    if (known) index = known.index;
    else if (opts.index) index = indexFor(fullTable(table), tablePath, opts.index, !!opts.quiet);
    else index = tableLocator(fullTable(table).regions, table.box.lower, table.box.upper, undefined, true);
    indexWall = (performance.now() - w0) / 1000;
    indexCpu = cpuSeconds() - c0;
  }
  warnings(table, tablePath, opts, clamp);
  if (opts.json) {
    const slackBlocks = (table.layout?.z ?? []).filter((b) => b.kind === 'stateSlack' || b.kind === 'outputSlack');
    if (!opts.quiet && table.lean && slackBlocks.length > 0)
      process.stderr.write(`tessera: warning: ${tablePath} is a lean table (no move sequence): slack values are null; solve without --lean to get them\n`);
    const all: number[][] = [];
    // one push per point: a spread of 10⁶ points would overflow the call stack
    for (let k = 0; k < flat.count; k++) all.push(Array.from(flat.values.subarray(k * flat.ntheta, (k + 1) * flat.ntheta)));
    for (const p of points) all.push(p);
    const out = evaluatePoints(fullTable(table), all, { clamp, index });
    clock?.lap('evaluate');
    process.stdout.write(JSON.stringify({ thetaNames: table.thetaNames, inputNames: table.inputNames, complete: table.stats.complete, clamped: clamp, points: out }) + '\n');
    if (clock) {
      clock.lap('write');
      process.stderr.write(clock.line(all.length));
    }
    return;
  }
  // streamed in chunks of lines (10⁶ points are ~60 MB of text), each chunk a new byte array
  const times: EvaluateTimes = { index: indexWall, locate: 0, law: 0, format: 0, cpu: { index: indexCpu, locate: 0, law: 0, format: 0 }, cpuNow: cpuSeconds };
  const chunks = evaluateCsvBytes(table, bytes, flat, points, { clamp, times, index });
  await writeCsv(chunks, clock, times, false, flat.count + points.length);
}

/** Write the CSV chunks to stdout; with --times, print the stage line (the CSV stage split as `times` and the writes measured it). */
async function writeCsv(chunks: Iterable<Uint8Array> | AsyncIterable<Uint8Array>, clock: StageClock | null, times: EvaluateTimes, threaded: boolean, count: number): Promise<void> {
  let write = 0;
  let writeCpu = 0;
  for await (const chunk of chunks) {
    const w0 = performance.now();
    const c0 = clock ? cpuSeconds() : 0;
    process.stdout.write(chunk);
    write += (performance.now() - w0) / 1000;
    if (clock) writeCpu += cpuSeconds() - c0;
  }
  if (clock) {
    clock.lap('csv');
    // the CSV stage split as evaluateCsvBytes and the writes measured it (the rest: the generator's own steps)
    const csv = clock.stages.pop()!;
    const cpu = times.cpu!;
    const rows: [string, number, number][] = [
      ['index', times.index, cpu.index],
      ['locate', times.locate, cpu.locate],
      ['law', times.law, cpu.law],
      ['format', times.format, cpu.format],
      ['write', write, writeCpu],
    ];
    const restWall = csv[1] - rows.reduce((a, r) => a + r[1], 0);
    const restCpu = csv[2] - rows.reduce((a, r) => a + r[2], 0);
    // with worker threads the rest is mostly waiting for their chunks (the CPU column is the whole
    // process's: the workers' seconds are counted in whichever stage of this thread they overlap)
    if (threaded) rows.push(['wait', Math.max(0, restWall), Math.max(0, restCpu)]);
    else rows[rows.length - 1] = ['write', write + Math.max(0, restWall), writeCpu + Math.max(0, restCpu)];
    clock.stages.push(...rows);
    process.stderr.write(clock.line(count));
  }
}

/**
 * The threaded CSV path once the table is read: this thread parses its range, waits for the
 * workers' parse, reads or builds the index and writes every range's lines in order. False (the
 * workers ended, nothing printed) when the one-thread path must run instead: the file's columns do
 * not match θ (its errors are that path's), a line is not a point, the table has no k-d tree, or
 * too few points.
 */
async function threadedAction(table: EvaluatedTable, known: BoxIndex | null, tablePath: string, opts: EvaluateOpts, clock: StageClock | null, plan: ThreadedPlan): Promise<boolean> {
  const n = table.dims.ntheta;
  const { csv, head } = plan;
  const giveUp = (): false => {
    endEvaluatePool(plan.pool);
    return false;
  };
  if (head.cells.length !== n || table.regions.length < 32) return giveUp();
  let order: number[] | null = null;
  if (head.header) {
    try {
      order = pointsHeaderColumns(opts.points!, head.line, head.cells, table.thetaNames);
    } catch {
      return giveUp();
    }
  }
  // the index will be built (no index file to read): its box LPs shared with the workers, which take
  // blocks of them once their parse is done, this thread at once (the same boxes, see shared-boxes.ts)
  let boxes: ReturnType<typeof jobBoxes> | null = null;
  // without an index file, the tree for this run (`oneRun`) is built right after its boxes, before
  // this thread waits for the points (an index file is written only once the points parsed cleanly)
  let early: BoxIndex | null = null;
  let earlyWall = 0;
  let earlyCpu = 0;
  // (also with a <table>.index there that is not this table's index: the lines were then split for
  // an index read back, but the tree for this run is built and its LPs shared all the same)
  if (!known && isFullTable(table) && (plan.build || !opts.index)) {
    const w0 = performance.now();
    const c0 = cpuSeconds();
    const job = boxJob(table.regions, n, tableBoxPad());
    csv.shareBoxes(job);
    boxes = jobBoxes(job, table.box.lower, table.box.upper);
    // the tree for this run grown in parts that this thread and the workers share (the same tree as
    // `tableLocator(…, true)` grows in one thread)
    if (!opts.index) early = await csv.shareTree(planTree(table.regions, boxes, table.box.lower, table.box.upper, tableLocatorOptions(n, true), job));
    earlyWall = (performance.now() - w0) / 1000;
    earlyCpu = cpuSeconds() - c0;
  }
  const clamp = !!opts.clamp;
  const times: EvaluateTimes = { index: earlyWall, locate: 0, law: 0, format: 0, cpu: { index: earlyCpu, locate: 0, law: 0, format: 0 }, cpuNow: cpuSeconds };
  // the one-run tree ready (the workers' own ranges parsed long before it) and enough points in the
  // workers' ranges alone: the workers start on their lines now, while this thread takes what is
  // left of its own range's parse (otherwise its range first: the workers may still be parsing)
  let ctx: CsvContext | null = null;
  let parsed: Awaited<ReturnType<ThreadedCsv['parsed']>> | null = null;
  if (!known && !opts.index && early) {
    parsed = await csv.parsed();
    if (!parsed.ok) return giveUp();
    if (parsed.count >= SCAN_BELOW_POINTS) {
      ctx = csvContext(table, { clamp, index: early }, times, Infinity);
      csv.startWorkers(ctx, order, undefined);
    }
  }
  const own = await csv.ownParsed();
  if (!own) return giveUp();
  parsed ??= await csv.parsed();
  if (!parsed.ok) return giveUp();
  const extra = opts.at ? parseAt(opts.at, n) : [];
  // the shared box LPs, an early tree and its context are counted in the index stage, not in the points stage they ran in
  clock?.lap('points', times.index, times.cpu!.index);
  const total = own.count + parsed.count + (opts.at ? 1 : 0);
  if (!ctx) {
    let index: BoxIndex | null = total >= SCAN_BELOW_POINTS ? early : null;
    if (known) index = known;
    else if (opts.index) {
      const w0 = performance.now();
      const c0 = cpuSeconds();
      index = indexFor(fullTable(table), tablePath, opts.index, !!opts.quiet, boxes ?? undefined);
      times.index += (performance.now() - w0) / 1000;
      times.cpu!.index += cpuSeconds() - c0;
    }
    ctx = csvContext(table, { clamp, index }, times, total);
    if (!ctx.index) return giveUp();
  }
  warnings(table, tablePath, opts, clamp);
  await writeCsv(csv.lines(ctx, own, order, Float64Array.from(extra), undefined, times), clock, times, true, total);
  if (clock) {
    const f = (x: number): string => (Number.isFinite(x) ? x.toFixed(2) : '?');
    process.stderr.write(`tessera: thread CPU seconds: main ${f(threadCpuSeconds())}, ${csv.workerCpu.map((c, w) => `worker ${w + 1} ${f(c)}`).join(', ')}; points per thread ${[own.count, ...csv.workerCounts].join(', ')}\n`);
  }
  return true;
}

/** The warnings of a CSV or JSON run (not with -q): an incomplete table, --clamp without limits. */
function warnings(table: EvaluatedTable, tablePath: string, opts: EvaluateOpts, clamp: boolean): void {
  if (!opts.quiet && !table.stats.complete)
    process.stderr.write(`tessera: warning: ${tablePath} is INCOMPLETE (stopped: ${table.stats.stopReason}); points may fall in no region\n`);
  if (!opts.quiet && clamp && !hasInputLimits(table.inputLimits, table.dims.nu))
    process.stderr.write(`tessera: warning: ${tablePath} has no finite input limit; --clamp changes nothing\n`);
}

/** The table as read in full (the JSON path, the index build and the scan need its regions' half-spaces). */
function fullTable(table: EvaluatedTable): TableFile {
  if (!isFullTable(table)) throw new Error('this step needs the table read in full');
  return table;
}

/**
 * `--index` when the index file is there and is the index of this table file as this build makes it
 * (the key's SHA-256 is that of the table's bytes, the region count and nθ match): the index and the
 * table read for its header and laws only (`readTableLaws`: the file was read in full and checked
 * when the index was written). Null in every other case, with nothing reported: the caller reads the
 * table in full and `indexFor` reads, rebuilds or refuses the index file with its own messages. With
 * `clock`, the table's bytes, their hash, the index file and the laws are the stage `table and index
 * (laws only)` (the stage `table` after it is then empty).
 */
function lawsWithIndex(tablePath: string, indexPath: string, clock: StageClock | null): { table: EvaluatedTable; index: BoxIndex } | null {
  let tableBytes: Uint8Array;
  let read: ReturnType<typeof indexFromBytes>;
  try {
    if (!existsSync(indexPath)) return null;
    read = indexFromBytes(readFileSync(indexPath));
    if ('problem' in read) return null;
    tableBytes = readFileSync(tablePath);
  } catch {
    return null;
  }
  const sha = bytesSha256(tableBytes);
  if (read.key.table !== sha) return null;
  const table = readTableLaws(tableBytes, tablePath);
  if (!table) return null;
  if (!indexMatches(read, indexKey(sha, table.regions.length, table.dims.ntheta))) return null;
  clock?.lap('table and index (laws only)');
  return { table, index: read.index };
}

/**
 * The point-location index of `table` (read from `tablePath`) kept in `indexPath`: read when the
 * file is the index of this table file as this build makes it (same SHA-256 of the table's bytes,
 * same locator parameters), else built by `tableLocator` and written there atomically (a note on
 * stderr says why, unless quiet). A file that is not an index file at all is refused (exit 2): it is
 * never overwritten.
 */
function indexFor(table: TableFile, tablePath: string, indexPath: string, quiet: boolean, boxes?: Parameters<typeof tableLocator>[3]): BoxIndex {
  let why = 'written';
  if (existsSync(indexPath)) {
    let bytes: Uint8Array;
    try {
      bytes = readFileSync(indexPath);
    } catch (e) {
      throw new InputError(indexPath, '--index', `cannot read the index file (${(e as NodeJS.ErrnoException).code ?? 'error'})`);
    }
    const read = indexFromBytes(bytes);
    if ('problem' in read && read.problem === 'tag') throw new InputError(indexPath, '--index', `not a ${INDEX_FILE_TAG} file (${read.detail}); name a new file or an index file written by tessera evaluate`);
    const cur = currentIndex(table, tablePath, indexPath, undefined, read);
    if ('index' in cur) return cur.index;
    why = `rebuilt (${cur.why})`;
    checkOutputPath(indexPath, '--index', { kind: 'file', extensions: ['.index'], what: 'an index file' });
  }
  // the index every command writes for this table file (src/cli/index-file.ts)
  const { index, key } = tableIndex(tablePath, table, boxes);
  writeFileAtomic(indexPath, indexToBytes(index, key));
  if (!quiet) process.stderr.write(`tessera: index ${indexPath} ${why}\n`);
  return index;
}
