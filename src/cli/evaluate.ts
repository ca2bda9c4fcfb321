import type { Command } from 'commander';
import { readTableFile } from '../table/file.js';
import { InputError, readBytesInput, readTextInput } from '../io/errors.js';
import { hasInputLimits } from '../table/clamp.js';
import { CLI } from './common.js';
import { evaluateCsvBytes, evaluatePoints, parsePointsCsv, parsePointsFlat, type FlatPoints } from '../table/points.js';

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
    .action((tablePath: string, opts: { points?: string; at?: string; json?: boolean; clamp?: boolean; quiet?: boolean }) => {
      const table = readTableFile(tablePath);
      if (!opts.points && !opts.at) throw new InputError(CLI, '--points', 'give --points FILE.csv or --at v1,v2,…');
      const points: number[][] = [];
      const empty: FlatPoints = { count: 0, ntheta: table.dims.ntheta, values: new Float64Array(0), from: new Int32Array(0), to: new Int32Array(0) };
      // the file's bytes: read by a byte scan, plain cells copied to the output as they are
      const bytes = opts.points ? readBytesInput(opts.points, 'points file') : new Uint8Array(0);
      const flat = opts.points ? parsePointsFlat(bytes, opts.points, table.thetaNames) : empty;
      if (opts.at) points.push(parseAt(opts.at, table.dims.ntheta));
      const clamp = !!opts.clamp;
      if (!opts.quiet && !table.stats.complete)
        process.stderr.write(`tessera: warning: ${tablePath} is INCOMPLETE (stopped: ${table.stats.stopReason}); points may fall in no region\n`);
      if (!opts.quiet && clamp && !hasInputLimits(table.inputLimits, table.dims.nu))
        process.stderr.write(`tessera: warning: ${tablePath} has no finite input limit; --clamp changes nothing\n`);
      if (opts.json) {
        const slackBlocks = (table.layout?.z ?? []).filter((b) => b.kind === 'stateSlack' || b.kind === 'outputSlack');
        if (!opts.quiet && table.lean && slackBlocks.length > 0)
          process.stderr.write(`tessera: warning: ${tablePath} is a lean table (no move sequence): slack values are null; solve without --lean to get them\n`);
        const all: number[][] = [];
        // one push per point: a spread of 10⁶ points would overflow the call stack
        for (let k = 0; k < flat.count; k++) all.push(Array.from(flat.values.subarray(k * flat.ntheta, (k + 1) * flat.ntheta)));
        for (const p of points) all.push(p);
        const out = evaluatePoints(table, all, { clamp });
        process.stdout.write(JSON.stringify({ thetaNames: table.thetaNames, inputNames: table.inputNames, complete: table.stats.complete, clamped: clamp, points: out }) + '\n');
        return;
      }
      // streamed in chunks of lines (10⁶ points are ~60 MB of text), each chunk a new byte array
      for (const chunk of evaluateCsvBytes(table, bytes, flat, points, { clamp })) process.stdout.write(chunk);
    });
}
