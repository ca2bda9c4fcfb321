import type { Command } from 'commander';
import { format } from 'd3';
import { InputError, readTextInput } from '../io/errors.js';
import { writeFileAtomic } from '../io/atomic.js';
import { checkOutputPath } from '../io/output.js';
import { EXIT } from './exit.js';
import { createdNote } from './common.js';
import { readTableFile } from '../table/file.js';
import type { TableFile } from '../table/format.js';
import { loadProblem } from '../problem/index.js';
import type { MpcModel } from '../problem/types.js';
import { thetaBlock } from '../formulation/layout.js';
import {
  nominalFailure,
  plantOf,
  sampleCoveredStarts,
  simulateRun,
  simulationCsv,
  summarise,
  type RunResult,
  type Schedule,
  type SimulationSetup,
  type SimulationSummary,
} from '../check/simulate.js';
import { closedLoopPlot, closedLoopSetup } from '../check/audit-table.js';
import { loadTableProblem, nonNegativeInt, positiveInt } from './map.js';

const CLI = '(command line)';
const num = format('.4~g');

interface SimulateCliOptions {
  x0?: string;
  initial?: string;
  samples?: number;
  seed: number;
  reference?: string;
  disturbance?: string;
  plant?: string;
  noise?: string;
  steps: number;
  csv?: string;
  svg?: string;
  json?: boolean;
  clamp?: boolean;
  quiet?: boolean;
}

/** Comma-separated finite numbers, or null when some cell is not a number. */
function numberList(text: string): number[] | null {
  const cells = text.split(',').map((c) => c.trim());
  const v = cells.map(Number);
  return cells.every((c, i) => c !== '' && Number.isFinite(v[i])) ? v : null;
}

/**
 * Rows of numbers from a CSV file: blank lines and lines starting with # skipped; the first line
 * may be a header when none of its cells reads as a number; every row has one of `widths` cells.
 */
export function readNumberRows(file: string, what: string, widths: number[], expect: string): { line: number; values: number[] }[] {
  const text = readTextInput(file, what);
  const rows: { line: number; values: number[] }[] = [];
  let first = true;
  text.split(/\r?\n/).forEach((raw, i) => {
    const s = raw.trim();
    if (!s || s.startsWith('#')) return;
    const cells = s.split(',').map((c) => c.trim());
    if (first) {
      first = false;
      if (cells.every((c) => c === '' || Number.isNaN(Number(c)))) return; // a header of names
    }
    const v = numberList(s);
    if (!v) throw new InputError(file, `line ${i + 1}`, `not a list of finite numbers: "${s}"`);
    if (!widths.includes(v.length)) throw new InputError(file, `line ${i + 1}`, `expected ${expect}, got ${v.length} values`);
    rows.push({ line: i + 1, values: v });
  });
  if (!rows.length) throw new InputError(file, '', `no ${what} found`);
  return rows;
}

/** A constant ("v1,v2") or a schedule file of lines "step,v1,v2" (values hold from that step on). */
function parseSignal(table: TableFile, kind: 'reference' | 'disturbance', flag: string, text: string | undefined): Schedule | null {
  const block = thetaBlock(table.layout, kind);
  if (text === undefined) return null;
  if (!block) throw new InputError(CLI, flag, `the table has no ${kind} block in θ (${table.layout.formulation} formulation)`);
  const k = block.size;
  const check = (v: number[], where: string, file: string) =>
    v.forEach((x, i) => {
      const lo = table.box.lower[block.offset + i];
      const hi = table.box.upper[block.offset + i];
      if (x < lo || x > hi) throw new InputError(file, where, `${block.names[i]} = ${x} lies outside the table's box [${lo}, ${hi}]: the table has no law there`);
    });
  const constant = numberList(text);
  if (constant) {
    if (constant.length !== k) throw new InputError(CLI, flag, `expected ${k} value(s) (${block.names.join(', ')}), got ${constant.length}`);
    check(constant, flag, CLI);
    return { steps: [0], values: [constant] };
  }
  const rows = readNumberRows(text, `${kind} schedule`, [k + 1], `a step and ${k} value(s) (${block.names.join(', ')})`);
  const steps: number[] = [];
  const values: number[][] = [];
  rows.forEach(({ line, values: v }, i) => {
    const st = v[0];
    if (!Number.isInteger(st) || st < 0) throw new InputError(text, `line ${line}`, `step must be a non-negative integer, got ${st}`);
    if (i === 0 && st !== 0) throw new InputError(text, `line ${line}`, `the schedule must start at step 0, got ${st}`);
    if (i > 0 && st <= steps[i - 1]) throw new InputError(text, `line ${line}`, `steps must increase (${st} after ${steps[i - 1]})`);
    check(v.slice(1), `line ${line}`, text);
    steps.push(st);
    values.push(v.slice(1));
  });
  return { steps, values };
}

function sameShape(a: number[][] | null | undefined, b: number[][] | null | undefined): boolean {
  const ra = a?.length ?? 0;
  const rb = b?.length ?? 0;
  return ra === rb && (ra === 0 || a![0].length === b![0].length);
}

/** The "true" plant of a mismatch study: the plant of another problem file, of the same dimensions. */
function truePlant(file: string, nominal: MpcModel): ReturnType<typeof plantOf> {
  const model = loadProblem(file).model;
  if (!model) throw new InputError(file, 'mpqp', 'the "true" plant must come from an MPC problem file, not a directly given mpQP');
  const nom = nominal as MpcModel & { Bd?: number[][] | null; Cd?: number[][] | null };
  if (model.n !== nominal.n || model.m !== nominal.m || model.p !== nominal.p)
    throw new InputError(file, 'plant', `has n=${model.n}, m=${model.m}, p=${model.p}; the table's plant has n=${nominal.n}, m=${nominal.m}, p=${nominal.p}`);
  if (!sameShape(model.Bd, nom.Bd) || !sameShape(model.Cd, nom.Cd)) throw new InputError(file, 'plant.Bd', "the disturbance matrices must have the table's shape");
  return plantOf(model);
}

export function formatSummary(table: TableFile, s: SimulationSummary, truePlantFile: string | undefined, judged: boolean): string {
  const lines = [
    `${table.name}: ${s.runs} closed-loop run${s.runs === 1 ? '' : 's'} × ${s.steps} steps on the ${truePlantFile ? `plant of ${truePlantFile} (model mismatch)` : 'nominal plant'}`,
    `  table vs online QP (quadprog): max |Δu| = ${num(s.maxDu)}${s.maxDuAt ? ` (run ${s.maxDuAt.run}, step ${s.maxDuAt.k})` : ''}; online QP infeasible at ${s.onlineInfeasibleSteps} step(s)`,
    `  steps with no region: ${s.noRegionSteps}${s.noRegionSteps ? ` in ${s.runsOutside} run(s); the previous input was held there` : ''}`,
    `  hard-limit violations: ${s.violations}`,
    ...(s.softViolations ? [`  soft-limit excursions (allowed, paid for in the cost): ${s.softViolations} step(s), worst ${num(s.softMaxExcess)}`] : []),
    ...s.violationsByLimit.map((v) => `    ${v.limit}: ${v.count} step(s), worst excess ${num(v.maxExcess)}, first at run ${v.first.run} step ${v.first.k}`),
    ...(s.offset.length ? [`  steady-state offset |y − r| at the end (max over runs): ${s.offset.map((o) => `${o.output} ${num(o.maxAbs)}`).join(', ')}`] : []),
    `  settling (within ${100 * s.settleFraction} % of the box width of each ${s.offset.length ? 'tracked output’s reference' : 'state'}, to the end): ${s.settled}/${s.runs} run(s)${s.maxSettlingStep !== null ? `, slowest at step ${s.maxSettlingStep}` : ''}`,
  ];
  if (judged && nominalFailure(s)) lines.push('  FAIL: on the nominal plant the table left its regions or broke a hard limit');
  else if (!judged) lines.push('  (model mismatch or measurement noise: reported, not judged; exit 1 is for the nominal, noise-free loop)');
  return lines.join('\n') + '\n';
}

export function register(program: Command): void {
  program
    .command('simulate')
    .description('closed loop of the table on the plant, with the online QP (quadprog) solved beside it at every step (exit 1 when the nominal loop leaves the regions or breaks a hard limit)')
    .argument('<table>', 'table file written by tessera solve')
    .option('--x0 <values>', 'one initial state x(0) (n values; n+m with u_prev(0) when θ holds the previous input)')
    .option('--initial <csv>', 'initial states, one per line, same values as --x0; optional header line')
    .option('--samples <n>', 'seeded initial states the table covers, uniform in the box (default 8 when no --x0/--initial)', positiveInt('--samples'))
    .option('--seed <n>', 'seed of the sampled initial states and of the noise', nonNegativeInt('--seed'), 1)
    .option('--reference <values|csv>', 'reference r: constant "v1,…" or a CSV schedule "step,v1,…" (values hold from that step)')
    .option('--disturbance <values|csv>', 'disturbance d: constant or CSV schedule as for --reference (default 0)')
    .option('--plant <file>', 'problem file whose plant is the "true" plant (model mismatch); the table still uses its own model')
    .option('--noise <std>', 'Gaussian noise on the measured state: one standard deviation, or one per state')
    .option('--steps <n>', 'steps per run', positiveInt('--steps'), 60)
    .option('--csv <file>', 'write the time series as CSV')
    .option('--svg <file>', 'write time plots of states, outputs and inputs as SVG')
    .option('--json', 'print the summary as JSON')
    .option('--clamp', "saturate the applied input to the table's input limits (as emit --clamp does in the C)")
    .option('-q, --quiet', 'print nothing but errors and warnings; the exit code tells')
    .action((tableFile: string, o: SimulateCliOptions) => {
      const created = [
        o.csv ? checkOutputPath(o.csv, '--csv', { kind: 'file', extensions: ['.csv'], what: 'CSV' }) : null,
        o.svg ? checkOutputPath(o.svg, '--svg', { kind: 'file', extensions: ['.svg'], what: 'an SVG plot' }) : null,
      ];
      const table = readTableFile(tableFile);
      if (table.layout?.formulation === 'mpqp' || !thetaBlock(table.layout, 'state'))
        throw new InputError(tableFile, 'layout', 'this table holds a directly given mpQP: it has no plant to simulate');
      const { loaded, mpqp } = loadTableProblem(table, tableFile);
      const model = loaded.model;
      if (!model) throw new InputError(tableFile, 'problem', 'this table holds a directly given mpQP: it has no plant to simulate');
      const n = model.n;
      const m = model.m;
      const prevBlock = thetaBlock(table.layout, 'inputPrev');
      const refBlock = thetaBlock(table.layout, 'reference');
      const distBlock = thetaBlock(table.layout, 'disturbance');

      const reference = parseSignal(table, 'reference', '--reference', o.reference);
      if (refBlock && !reference)
        throw new InputError(CLI, '--reference', `the table tracks ${refBlock.size} output(s) (${refBlock.names.join(', ')}); give --reference`);
      let disturbance = parseSignal(table, 'disturbance', '--disturbance', o.disturbance);
      if (distBlock && !disturbance) {
        const zero = new Array<number>(distBlock.size).fill(0);
        zero.forEach((_, i) => {
          if (table.box.lower[distBlock.offset + i] > 0 || table.box.upper[distBlock.offset + i] < 0)
            throw new InputError(CLI, '--disturbance', `d = 0 lies outside the table's box for ${distBlock.names[i]}; give --disturbance`);
        });
        disturbance = { steps: [0], values: [zero] };
      }

      let noise: SimulationSetup['noise'];
      if (o.noise !== undefined) {
        const v = numberList(o.noise);
        if (!v || v.some((x) => x < 0) || (v.length !== 1 && v.length !== n))
          throw new InputError(CLI, '--noise', `expected one non-negative standard deviation or ${n} (one per state), got "${o.noise}"`);
        noise = { std: v.length === 1 ? new Array<number>(n).fill(v[0]) : v, seed: o.seed };
      }

      const widths = prevBlock ? [n, n + m] : [n];
      const expect = prevBlock ? `${n} values (x(0)) or ${n + m} (x(0), u_prev(0))` : `${n} values (x(0))`;
      const starts: { x: number[]; uPrev?: number[] }[] = [];
      const addStart = (v: number[]) => starts.push({ x: v.slice(0, n), uPrev: v.length > n ? v.slice(n) : undefined });
      if (o.x0 !== undefined) {
        const v = numberList(o.x0);
        if (!v) throw new InputError(CLI, '--x0', `not a list of finite numbers: "${o.x0}"`);
        if (!widths.includes(v.length)) throw new InputError(CLI, '--x0', `expected ${expect}, got ${v.length}`);
        addStart(v);
      }
      if (o.initial !== undefined) readNumberRows(o.initial, 'initial states', widths, expect).forEach((r) => addStart(r.values));
      const sampleCount = o.samples ?? (starts.length ? 0 : 8);
      if (sampleCount > 0) {
        const r0 = reference?.values[0] ?? [];
        const d0 = disturbance?.values[0] ?? [];
        const got = sampleCoveredStarts(table, sampleCount, o.seed, r0, d0);
        if (got.length < sampleCount)
          throw new InputError(CLI, '--samples', `only ${got.length} of ${sampleCount} initial states found in a region after ${1000 * sampleCount} draws (is the table's feasible set that small for this reference/disturbance?)`);
        starts.push(...got);
      }

      const plant = o.plant ? truePlant(o.plant, model) : undefined;
      const setup = closedLoopSetup(table, model, mpqp, { steps: o.steps, reference: reference ?? undefined, disturbance: disturbance ?? undefined, noise, clamp: o.clamp, plant });
      const runs: RunResult[] = starts.map((s, i) => simulateRun(setup, i, s.x, s.uPrev));
      const summary = summarise(setup, runs);
      if (o.csv) writeFileAtomic(o.csv, simulationCsv(setup, runs));
      if (o.svg) writeFileAtomic(o.svg, closedLoopPlot(table, model, setup, runs, `${table.name}: closed loop under the table law`));
      if (!table.stats.complete) process.stderr.write(`tessera: warning: ${tableFile} is INCOMPLETE (stopped: ${table.stats.stopReason}); steps with no region may be unexplored parts\n`);
      // exit 1 judges the table: the nominal plant with exact measurements; mismatch and noise runs are reported only
      const judged = !o.plant && !(noise && noise.std.some((v) => v > 0));
      const failed = judged && nominalFailure(summary);
      if (failed) process.exitCode = EXIT.found;
      if (o.quiet) return;
      for (const d of created) if (d) createdNote(d, o.json ? 'stderr' : 'stdout');
      process.stdout.write(o.json ? JSON.stringify({ summary, judged, failed }) + '\n' : formatSummary(table, summary, o.plant, judged));
      if (o.csv && !o.json) process.stdout.write(`  written ${o.csv}\n`);
      if (o.svg && !o.json) process.stdout.write(`  written ${o.svg}\n`);
    });
}
