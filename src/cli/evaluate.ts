import type { Command } from 'commander';
import { readTableFile, evaluateTable, applyAffine } from '../table/table.js';
import { InputError, readTextInput } from '../io/errors.js';
import type { TableFile } from '../table/format.js';

/** Parse the points CSV: one θ per line, comma-separated, an optional header line of names. */
export function readPointsCsv(path: string, ntheta: number): number[][] {
  const text = readTextInput(path, 'points file');
  const lines = text.split(/\r?\n/).map((l) => l.trim());
  const points: number[][] = [];
  let first = true;
  lines.forEach((line, i) => {
    if (line === '' || line.startsWith('#')) return;
    const cells = line.split(',').map((c) => c.trim());
    const nums = cells.map(Number);
    if (first) {
      first = false;
      // a header is a line of names: no cell of it reads as a number
      if (cells.every((c, k) => c === '' || Number.isNaN(nums[k]))) {
        if (cells.length !== ntheta) throw new InputError(path, `line ${i + 1}`, `header has ${cells.length} names, θ has ${ntheta} entries`);
        return;
      }
    }
    if (cells.length !== ntheta) throw new InputError(path, `line ${i + 1}`, `expected ${ntheta} values (θ has ${ntheta} entries), got ${cells.length}`);
    nums.forEach((v, k) => {
      if (cells[k] === '' || !Number.isFinite(v)) throw new InputError(path, `line ${i + 1}, column ${k + 1}`, `"${cells[k]}" is not a finite number`);
    });
    points.push(nums);
  });
  return points;
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

/** Shortest decimal that reads back as the same double. */
const num = (v: number): string => String(v);

export function evaluationCsv(table: TableFile, points: number[][]): string {
  const header = [...table.thetaNames, 'region', ...table.inputNames].join(',');
  const rows = points.map((p) => {
    const e = evaluateTable(table, p);
    const u = e.u ? e.u.map(num) : table.inputNames.map(() => '');
    return [...p.map(num), String(e.region), ...u].join(',');
  });
  return [header, ...rows].join('\n') + '\n';
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
        // slack values: the z entries of the layout's slack blocks, from the region's stored moves
        const slackBlocks = (table.layout?.z ?? []).filter((b) => b.kind === 'stateSlack' || b.kind === 'outputSlack');
        const out = points.map((p) => {
          const e = evaluateTable(table, p);
          if (slackBlocks.length === 0) return { theta: p, region: e.region, u: e.u };
          // a merged region keeps one member's moves, exact on that member only: no slack values there
          const merged = e.region >= 0 && ((table.regions[e.region] as { mergedFrom?: number[] }).mergedFrom?.length ?? 1) > 1;
          const slacks: Record<string, number> | null = e.region < 0 || merged ? null : {};
          if (slacks) {
            const moves = table.regions[e.region].moves;
            for (const b of slackBlocks)
              b.names.forEach((nm, i) => (slacks[nm] = applyAffine({ F: [moves.F[b.offset + i]], g: [moves.g[b.offset + i]] }, p)[0]));
          }
          return { theta: p, region: e.region, u: e.u, slacks };
        });
        process.stdout.write(JSON.stringify({ thetaNames: table.thetaNames, inputNames: table.inputNames, complete: table.stats.complete, points: out }) + '\n');
        return;
      }
      process.stdout.write(evaluationCsv(table, points));
    });
}
