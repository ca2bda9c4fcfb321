import type { Command } from 'commander';
import { evaluateTable, applyAffine } from '../table/table.js';
import { readTableFile } from '../table/file.js';
import { InputError, readTextInput } from '../io/errors.js';
import type { TableFile } from '../table/format.js';
import { clampInputs, hasInputLimits } from '../table/clamp.js';
import { CLI } from './common.js';
import { parsePointsCsv } from '../table/points.js';

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

/** Shortest decimal that reads back as the same double. */
const num = (v: number): string => String(v);

/** u(0) at θ, saturated to the table's input limits when `clamp` is set. */
function evaluateAt(table: TableFile, theta: number[], clamp: boolean) {
  const e = evaluateTable(table, theta);
  return { region: e.region, u: e.u && clamp ? clampInputs(e.u, table.inputLimits) : e.u };
}

export function evaluationCsv(table: TableFile, points: number[][], clamp = false): string {
  const header = [...table.thetaNames, 'region', ...table.inputNames].join(',');
  const rows = points.map((p) => {
    const e = evaluateAt(table, p, clamp);
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
    .option('--points <csv>', 'CSV file: one θ per line; an optional header line names every θ entry once, in any order')
    .option('--at <values>', 'one point, comma-separated, e.g. --at 1.2,-0.3')
    .option('--clamp', "saturate u(0) to the table's input limits (inputLimits)")
    .option('--json', 'print JSON instead of CSV')
    .option('-q, --quiet', 'print the values only: no warnings')
    .action((tablePath: string, opts: { points?: string; at?: string; json?: boolean; clamp?: boolean; quiet?: boolean }) => {
      const table = readTableFile(tablePath);
      if (!opts.points && !opts.at) throw new InputError(CLI, '--points', 'give --points FILE.csv or --at v1,v2,…');
      const points: number[][] = [];
      // one push per point: a spread of 10⁶ points would overflow the call stack
      if (opts.points) for (const p of readPointsCsv(opts.points, table.thetaNames)) points.push(p);
      if (opts.at) points.push(parseAt(opts.at, table.dims.ntheta));
      const clamp = !!opts.clamp;
      if (!opts.quiet && !table.stats.complete)
        process.stderr.write(`tessera: warning: ${tablePath} is INCOMPLETE (stopped: ${table.stats.stopReason}); points may fall in no region\n`);
      if (!opts.quiet && clamp && !hasInputLimits(table.inputLimits, table.dims.nu))
        process.stderr.write(`tessera: warning: ${tablePath} has no finite input limit; --clamp changes nothing\n`);
      if (opts.json) {
        // slack values: the z entries of the layout's slack blocks, from the region's stored moves
        const slackBlocks = (table.layout?.z ?? []).filter((b) => b.kind === 'stateSlack' || b.kind === 'outputSlack');
        if (!opts.quiet && table.lean && slackBlocks.length > 0)
          process.stderr.write(`tessera: warning: ${tablePath} is a lean table (no move sequence): slack values are null; solve without --lean to get them\n`);
        const out = points.map((p) => {
          const e = evaluateAt(table, p, clamp);
          if (slackBlocks.length === 0) return { theta: p, region: e.region, u: e.u };
          // a merged region keeps one member's moves, exact on that member only: no slack values there
          const merged = e.region >= 0 && ((table.regions[e.region] as { mergedFrom?: number[] }).mergedFrom?.length ?? 1) > 1;
          // a lean table keeps no moves: no slack values (said once on stderr)
          const moves = e.region < 0 ? undefined : table.regions[e.region].moves;
          const slacks: Record<string, number> | null = !moves || merged ? null : {};
          if (slacks && moves) {
            for (const b of slackBlocks)
              b.names.forEach((nm, i) => (slacks[nm] = applyAffine({ F: [moves.F[b.offset + i]], g: [moves.g[b.offset + i]] }, p)[0]));
          }
          return { theta: p, region: e.region, u: e.u, slacks };
        });
        process.stdout.write(JSON.stringify({ thetaNames: table.thetaNames, inputNames: table.inputNames, complete: table.stats.complete, clamped: clamp, points: out }) + '\n');
        return;
      }
      process.stdout.write(evaluationCsv(table, points, clamp));
    });
}
