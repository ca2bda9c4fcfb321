import type { Command } from 'commander';
import { readTableFile } from '../table/file.js';
import { InputError, readTextInput } from '../io/errors.js';
import { evaluatePoints, evaluationCsv, parsePointsCsv } from '../table/points.js';

/** Read a points CSV file (see parsePointsCsv). */
export function readPointsCsv(path: string, ntheta: number): number[][] {
  return parsePointsCsv(readTextInput(path, 'points file'), path, ntheta);
}

function parseAt(text: string, ntheta: number): number[] {
  const cells = text.split(',').map((c) => c.trim());
  const nums = cells.map(Number);
  if (cells.length !== ntheta) throw new InputError('(command line)', '--at', `expected ${ntheta} comma-separated values, got ${cells.length}`);
  nums.forEach((v, k) => {
    if (cells[k] === '' || !Number.isFinite(v)) throw new InputError('(command line)', '--at', `"${cells[k]}" is not a finite number`);
  });
  return nums;
}

export function register(program: Command): void {
  program
    .command('evaluate')
    .description('evaluate the table law u(0) at given parameter points')
    .argument('<table>', 'table file written by `tessera solve`')
    .option('--points <csv>', 'CSV file: one θ per line, optional header line')
    .option('--at <values>', 'one point, comma-separated, e.g. --at 1.2,-0.3')
    .option('--json', 'print JSON instead of CSV')
    .action((tablePath: string, opts: { points?: string; at?: string; json?: boolean }) => {
      const table = readTableFile(tablePath);
      if (!opts.points && !opts.at) throw new InputError('(command line)', '--points', 'give --points FILE.csv or --at v1,v2,…');
      const points: number[][] = [];
      if (opts.points) points.push(...readPointsCsv(opts.points, table.dims.ntheta));
      if (opts.at) points.push(parseAt(opts.at, table.dims.ntheta));
      if (!table.stats.complete)
        process.stderr.write(`tessera: warning: ${tablePath} is INCOMPLETE (stopped: ${table.stats.stopReason}); points may fall in no region\n`);
      if (opts.json) {
        const out = evaluatePoints(table, points);
        process.stdout.write(JSON.stringify({ thetaNames: table.thetaNames, inputNames: table.inputNames, complete: table.stats.complete, points: out }) + '\n');
        return;
      }
      process.stdout.write(evaluationCsv(table, points));
    });
}
