import { Option, type Command } from 'commander';
import type { Command as Cmd } from 'commander';
import { InputError, readTextInput } from '../io/errors.js';
import { writeFileAtomic } from '../io/atomic.js';
import { checkOutputPath } from '../io/output.js';
import { createdNote } from './common.js';
import { readTableFile } from '../table/file.js';
import type { TableFile } from '../table/format.js';
import { loadProblem } from '../problem/index.js';
import type { MpqpProblem } from '../mpqp/types.js';
import type { LoadedProblem } from '../problem/index.js';
import { tableProblem } from '../table/solve.js';
import { liftPoint, makeSliceSpec, type SliceSpec } from '../partition/slice.js';
import type { ColourBy } from '../plot/svg.js';
import { isMergedTable, LEAN_NO_COST } from '../plot/heat.js';
import { drawMap } from '../plot/map.js';
import { parseInitialStates } from '../plot/trajectory.js';

const CLI = '(command line)';

/**
 * The problem behind a table (the library's `tableProblem`): PROBLEM when given, else the table's
 * own echo of it; warns on stderr when PROBLEM is not the one the table was built from.
 */
export function loadTableProblem(table: TableFile, tableFile: string, problemFile?: string): { loaded: LoadedProblem; mpqp: MpqpProblem } {
  const tp = tableProblem(table, { tableFile, problem: problemFile ? loadProblem(problemFile) : undefined, problemFile });
  if (!tp.sameProblem)
    process.stderr.write(`tessera: warning: ${problemFile} is not the problem ${tableFile} was built from (hash differs); feasibility is judged by ${problemFile}\n`);
  return { loaded: tp.loaded, mpqp: tp.mpqp };
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

/** Initial states of the trajectories file, through the library's parser. */
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
  window?: string;
  color: string;
  colour?: string;
  trajectories?: string;
  steps: number;
  heat?: string;
  problem?: string;
  output?: string;
  quiet?: boolean;
}

/** `--window x0:x1,y0:y1`: a part of the slice rectangle (within the box) to draw. */
export function parseWindow(v: string, rect: SliceSpec['rect'], names: [string, string]): SliceSpec['rect'] {
  const m = /^\s*([^:,]+):([^:,]+),([^:,]+):([^:,]+)\s*$/.exec(v);
  if (!m) throw new InputError(CLI, '--window', `expected x0:x1,y0:y1, got "${v}"`);
  const [x0, x1, y0, y1] = m.slice(1, 5).map(Number);
  if (![x0, x1, y0, y1].every(Number.isFinite)) throw new InputError(CLI, '--window', `not four numbers: "${v}"`);
  const axis = (lo: number, hi: number, blo: number, bhi: number, name: string) => {
    if (!(lo < hi)) throw new InputError(CLI, '--window', `${name}: ${lo}:${hi} is empty (the first value must be below the second)`);
    if (lo < blo || hi > bhi) throw new InputError(CLI, '--window', `${name}: ${lo}:${hi} leaves the parameter box [${blo}, ${bhi}]`);
  };
  axis(x0, x1, rect.x0, rect.x1, names[0]);
  axis(y0, y1, rect.y0, rect.y1, names[1]);
  return { x0, x1, y0, y1 };
}

/** Initial states outside the box (or the window) are drawn off the canvas: say which. */
export function trajectoryStartWarnings(starts: number[][], spec: SliceSpec, box: TableFile['box'], names: string[]): string[] {
  const out: string[] = [];
  const [ix, iy] = spec.axes;
  starts.forEach((th, k) => {
    const outside = th.map((v, j) => (v < box.lower[j] || v > box.upper[j] ? `${names[j]} = ${v} not in [${box.lower[j]}, ${box.upper[j]}]` : null)).filter((s) => s !== null);
    if (outside.length) out.push(`initial state ${k + 1} lies outside the parameter box (${outside.join('; ')}): its start is drawn off the map`);
    else if (th[ix] < spec.rect.x0 || th[ix] > spec.rect.x1 || th[iy] < spec.rect.y0 || th[iy] > spec.rect.y1)
      out.push(`initial state ${k + 1} lies outside the --window: its start is not on the map`);
  });
  return out;
}

export function register(program: Command): void {
  program
    .command('map')
    .description('draw an exact 2-D slice of the partition as SVG: regions, infeasible parts, holes')
    .argument('<table>', 'table file written by tessera solve')
    .option('--axes <i,j>', 'the two parameters on the axes, by name or 0-based index (default: the first two)')
    .option('--fix <k=v,...>', 'values of the other parameters (default: the middle of the box)')
    .option('--window <x0:x1,y0:y1>', 'draw only this part of the slice (within the box), e.g. --window -0.5:0.5,-0.2:0.2')
    .option('--color <scheme>', 'colour regions by law | active | region (also spelt --colour)', 'law')
    .addOption(new Option('--colour <scheme>').hideHelp())
    .option('--trajectories <file>', 'CSV of initial states: draw the closed loop under the table law from each')
    .option('--steps <n>', 'closed-loop steps per trajectory', positiveInt('--steps'), 40)
    .option('--heat <what>', 'heat map under the borders, instead of the --color fill: an input name (u(0)) or "cost" (optimal cost)')
    .option('--problem <file>', 'problem file deciding feasibility (default: the problem stored in the table)')
    .requiredOption('-o, --output <svg>', 'SVG file to write (.svg)')
    .option('-q, --quiet', 'print nothing but errors and warnings')
    .action((tableFile: string, o: MapCliOptions, cmd: Cmd) => {
      const created = checkOutputPath(o.output!, '-o', { kind: 'file', extensions: ['.svg'], what: 'an SVG map' });
      const table = readTableFile(tableFile);
      if (o.colour !== undefined) {
        if (cmd.getOptionValueSource('color') === 'cli' && o.colour !== o.color)
          throw new InputError(CLI, '--colour', `given together with --color and different ("${o.colour}" vs "${o.color}")`);
        o.color = o.colour;
      }
      const colorGiven = o.colour !== undefined || cmd.getOptionValueSource('color') === 'cli';
      if (!['law', 'active', 'region'].includes(o.color)) throw new InputError(CLI, o.colour !== undefined ? '--colour' : '--color', `expected law, active or region, got "${o.color}"`);
      const axes = parseAxes(table, o.axes);
      const fixed = parseFix(table, o.fix, axes);
      const window = o.window ? parseWindow(o.window, makeSliceSpec(table.box, axes, fixed).rect, [table.thetaNames[axes[0]], table.thetaNames[axes[1]]]) : undefined;
      const problem = loadTableProblem(table, tableFile, o.problem);
      if (o.heat) {
        // the library refuses the same cases; checked here to name the command-line option
        if (o.heat !== 'cost' && !table.inputNames.includes(o.heat)) throw new InputError(CLI, '--heat', `expected "cost" or an input name (${table.inputNames.join(', ')}), got "${o.heat}"`);
        if (o.heat === 'cost' && isMergedTable(table))
          throw new InputError(tableFile, 'regions', 'a merged table holds u(0) laws only; draw the cost heat map from the unmerged table');
        if (o.heat === 'cost' && table.lean) throw new InputError(tableFile, 'lean', LEAN_NO_COST);
        if (colorGiven) process.stderr.write(`tessera: warning: --heat ${o.heat} fills the regions, so --color ${o.color} is not drawn\n`);
      }
      let starts: number[][] | undefined;
      if (o.trajectories) {
        if (!problem.loaded.model) throw new InputError(CLI, '--trajectories', 'closed-loop trajectories need an MPC table; this table holds a directly given mpQP');
        const spec = makeSliceSpec(table.box, axes, fixed);
        if (window) spec.rect = window;
        starts = readInitialStates(o.trajectories, table.dims.ntheta).map((row) => (row.length === table.dims.ntheta ? row : liftPoint(spec, row[0], row[1])));
        for (const w of trajectoryStartWarnings(starts, spec, table.box, table.thetaNames)) process.stderr.write(`tessera: warning: ${o.trajectories}: ${w}\n`);
      }
      const res = drawMap(table, problem, { axes, fixed, window, colourBy: o.color as ColourBy, heat: o.heat, trajectories: starts ? { starts, steps: o.steps } : undefined });
      const slice = res.slice;
      writeFileAtomic(o.output!, res.svg);
      if (o.quiet) return;
      if (created) createdNote(created);
      const a = slice.gaps.areas;
      const p = (v: number) => ((100 * v) / a.rect).toFixed(2) + ' %';
      const win = o.window ? ` (window ${o.window})` : '';
      process.stdout.write(
        `${table.name}: slice ${table.thetaNames[axes[0]]} × ${table.thetaNames[axes[1]]}${win}, ${slice.polygons.length} regions cut the plane\n` +
          `  covered ${p(a.covered)} · infeasible ${p(a.infeasible)} · holes ${p(a.holes)} (${res.holeCount} hole${res.holeCount === 1 ? '' : 's'}; exact polygon areas)\n` +
          (table.stats.complete === false ? `  INCOMPLETE TABLE (${table.stats.stopReason}): uncovered parts may be unexplored\n` : '') +
          `  written ${o.output}\n`,
      );
    });
}
