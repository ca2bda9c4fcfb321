import type { Command } from 'commander';
import { InputError, readTextInput } from '../io/errors.js';
import { writeFileAtomic } from '../io/atomic.js';
import { readTableFile } from '../table/file.js';
import type { TableFile } from '../table/format.js';
import { loadProblem } from '../problem/load.js';
import { tableProblem, type TableProblem } from '../table/solve.js';
import type { ColourBy } from '../plot/svg.js';
import { parseInitialStates } from '../plot/trajectory.js';
import { isMergedTable } from '../plot/heat.js';
import { drawMap } from '../plot/map.js';

const CLI = '(command line)';

/** The problem behind a table: PROBLEM when given, else the table's own echo of it (warns when it is not the table's). */
export function loadTableProblem(table: TableFile, tableFile: string, problemFile?: string): TableProblem {
  const tp = tableProblem(table, { tableFile, problemFile, problem: problemFile ? loadProblem(problemFile) : undefined });
  if (!tp.sameProblem)
    process.stderr.write(`tessera: warning: ${problemFile} is not the problem ${tableFile} was built from (hash differs); feasibility is judged by ${problemFile}\n`);
  return tp;
}

/** A θ entry by name or by 0-based index. */
export function thetaIndex(table: TableFile, s: string, flag: string): number {
  const t = s.trim();
  const byName = table.thetaNames.indexOf(t);
  if (byName >= 0) return byName;
  if (/^\d+$/.test(t) && Number(t) < table.dims.ntheta) return Number(t);
  throw new InputError(CLI, flag, `unknown parameter "${t}" (expected one of ${table.thetaNames.join(', ')} or an index 0…${table.dims.ntheta - 1})`);
}

export function parseAxes(table: TableFile, v: string | undefined): [number, number] {
  if (table.dims.ntheta < 2) throw new InputError(CLI, '--axes', 'the table has a single parameter; a 2-D map needs two');
  if (v === undefined) return [0, 1];
  const parts = v.split(',');
  if (parts.length !== 2) throw new InputError(CLI, '--axes', `expected two parameters "I,J", got "${v}"`);
  const ax: [number, number] = [thetaIndex(table, parts[0], '--axes'), thetaIndex(table, parts[1], '--axes')];
  if (ax[0] === ax[1]) throw new InputError(CLI, '--axes', 'the two axes must differ');
  return ax;
}

export function parseFix(table: TableFile, v: string | undefined, axes: [number, number]): Map<number, number> {
  const out = new Map<number, number>();
  if (!v) return out;
  for (const part of v.split(',')) {
    const m = /^\s*([^=]+?)\s*=\s*(\S+)\s*$/.exec(part);
    if (!m) throw new InputError(CLI, '--fix', `expected NAME=VALUE, got "${part}"`);
    const k = thetaIndex(table, m[1], '--fix');
    if (axes.includes(k)) throw new InputError(CLI, '--fix', `"${m[1]}" is an axis of the map and cannot be fixed`);
    const x = Number(m[2]);
    if (!Number.isFinite(x)) throw new InputError(CLI, '--fix', `value of ${m[1]} is not a number: "${m[2]}"`);
    const lo = table.box.lower[k];
    const hi = table.box.upper[k];
    if (x < lo || x > hi) throw new InputError(CLI, '--fix', `${m[1]} = ${x} lies outside the parameter box [${lo}, ${hi}]`);
    out.set(k, x);
  }
  return out;
}

/** Initial states file (see parseInitialStates). */
export function readInitialStates(file: string, ntheta: number): number[][] {
  return parseInitialStates(readTextInput(file, 'initial states'), file, ntheta);
}

export function positiveInt(flag: string) {
  return (v: string): number => {
    const x = Number(v);
    if (!Number.isInteger(x) || x <= 0) throw new InputError(CLI, flag, `expected a positive integer, got "${v}"`);
    return x;
  };
}

export function nonNegativeInt(flag: string) {
  return (v: string): number => {
    const x = Number(v);
    if (!Number.isInteger(x) || x < 0) throw new InputError(CLI, flag, `expected a non-negative integer, got "${v}"`);
    return x;
  };
}

interface MapCliOptions {
  axes?: string;
  fix?: string;
  color: string;
  trajectories?: string;
  steps: number;
  heat?: string;
  problem?: string;
  output?: string;
}

export function register(program: Command): void {
  program
    .command('map')
    .description('draw an exact 2-D slice of the partition as SVG: regions, infeasible parts, holes')
    .argument('<table>', 'table file written by tessera solve')
    .option('--axes <i,j>', 'the two parameters on the axes, by name or 0-based index (default: the first two)')
    .option('--fix <k=v,...>', 'values of the other parameters (default: the middle of the box)')
    .option('--color <scheme>', 'colour regions by law | active | region', 'law')
    .option('--trajectories <file>', 'CSV of initial states: draw the closed loop under the table law from each')
    .option('--steps <n>', 'closed-loop steps per trajectory', positiveInt('--steps'), 40)
    .option('--heat <what>', 'heat map under the borders: an input name (u(0)) or "cost" (optimal cost)')
    .option('--problem <file>', 'problem file deciding feasibility (default: the problem stored in the table)')
    .requiredOption('-o, --output <svg>', 'SVG file to write')
    .action((tableFile: string, o: MapCliOptions) => {
      const table = readTableFile(tableFile);
      if (!['law', 'active', 'region'].includes(o.color)) throw new InputError(CLI, '--color', `expected law, active or region, got "${o.color}"`);
      const axes = parseAxes(table, o.axes);
      const fixed = parseFix(table, o.fix, axes);
      if (o.heat && o.heat !== 'cost' && !table.inputNames.includes(o.heat))
        throw new InputError(CLI, '--heat', `expected "cost" or an input name (${table.inputNames.join(', ')}), got "${o.heat}"`);
      if (o.heat === 'cost' && isMergedTable(table))
        throw new InputError(tableFile, 'regions', 'a merged table holds u(0) laws only; draw the cost heat map from the unmerged table');
      const problem = loadTableProblem(table, tableFile, o.problem);
      if (o.trajectories && !problem.loaded.model)
        throw new InputError(CLI, '--trajectories', 'closed-loop trajectories need an MPC table; this table holds a directly given mpQP');
      const starts = o.trajectories ? readInitialStates(o.trajectories, table.dims.ntheta) : undefined;
      const res = drawMap(table, problem, {
        axes,
        fixed,
        colourBy: o.color as ColourBy,
        heat: o.heat,
        trajectories: starts && { starts, steps: o.steps },
      });
      const slice = res.slice;
      writeFileAtomic(o.output!, res.svg);
      const a = slice.gaps.areas;
      const p = (v: number) => ((100 * v) / a.rect).toFixed(2) + ' %';
      process.stdout.write(
        `${table.name}: slice ${table.thetaNames[axes[0]]} × ${table.thetaNames[axes[1]]}, ${slice.polygons.length} regions cut the plane\n` +
          `  covered ${p(a.covered)} · infeasible ${p(a.infeasible)} · holes ${p(a.holes)} (${res.holeCount} hole${res.holeCount === 1 ? '' : 's'}; exact polygon areas)\n` +
          (table.stats.complete === false ? `  INCOMPLETE TABLE (${table.stats.stopReason}): uncovered parts may be unexplored\n` : '') +
          `  written ${o.output}\n`,
      );
    });
}
