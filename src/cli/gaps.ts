import type { Command } from 'commander';
import { format } from 'd3';
import { InputError } from '../io/errors.js';
import { readTableFile } from '../table/file.js';
import { analyseCoverage, type CoverageReport, type Fraction } from '../check/gaps.js';
import { loadTableProblem, positiveInt } from './map.js';
import { EXIT } from './exit.js';
import { CLI, positive, SECONDS } from './common.js';

interface GapsCliOptions {
  samples: number;
  seed: number;
  timeLimit?: number;
  witnesses: number;
  json?: boolean;
  progress: boolean;
  problem?: string;
  quiet?: boolean;
}

const pct = (f: Fraction) => `${(100 * f.fraction).toFixed(3)} % ± ${(100 * f.stderr).toFixed(3)} %`;
const num = format('.6~g');

export function formatReport(r: CoverageReport): string {
  const mc = r.monteCarlo;
  const lines = [
    `${r.name}: coverage of the parameter box (${r.thetaNames.join(', ')})`,
    r.tableComplete ? '' : '  INCOMPLETE TABLE: the solver stopped early, so uncovered parts may simply be unexplored',
    `  Monte Carlo: ${mc.samples} uniform points, seed ${mc.seed}${mc.complete ? '' : ` (stopped early by the time limit; ${mc.requested} requested)`}; ± is one binomial standard error √(p(1−p)/N)`,
    `    covered     ${pct(mc.covered)}`,
    `    infeasible  ${pct(mc.infeasible)}   (no input sequence meets the constraints; decided by LP)`,
    `    holes       ${pct(mc.holes)}${mc.holes.count === 0 ? `   (none hit; 95 % upper bound 3/N = ${(100 * mc.holes.upper95).toFixed(3)} %)` : ''}`,
    `  facet probes: ${r.facetProbes.facets} non-box facets stepped across, ${r.facetProbes.holes} landed in a hole`,
  ];
  if (r.exact2d) {
    const a = r.exact2d.areas;
    const f = (v: number) => `${num(v)} (${((100 * v) / a.rect).toFixed(4)} %)`;
    lines.push(
      `  exact areas (2-D θ, polygons): box ${num(a.rect)}, covered ${f(a.covered)}, infeasible ${f(a.infeasible)}, holes ${f(a.holes)} in ${r.exact2d.holeComponents} component(s)`,
    );
  }
  if (r.hasHoles) {
    lines.push(`  HOLES FOUND: ${r.holeWitnessCount} witness point(s); the controller has no law there. First ones:`);
    for (const w of r.witnesses) lines.push(`    ${r.thetaNames.map((n, k) => `${n}=${num(w.theta[k])}`).join(' ')}  [${w.source}${w.fromRegion !== undefined ? `, across a facet of region ${w.fromRegion}, facet radius ${num(w.facetRadius ?? NaN)}` : ''}]`);
  } else lines.push('  no holes found');
  return lines.filter((l) => l !== '').join('\n') + '\n';
}

export function register(program: Command): void {
  program
    .command('gaps')
    .description('coverage of the whole parameter box: infeasible parts vs holes (exit code 1 when holes are found)')
    .argument('<table>', 'table file written by tessera solve')
    .argument('[problem]', 'same as --problem (kept for old scripts)')
    .option('--problem <file>', 'problem file deciding feasibility (default: the problem stored in the table)')
    .option('--samples <n>', 'Monte Carlo points', positiveInt('--samples'), 20000)
    .option('--seed <n>', 'seed of the Monte Carlo generator', (v: string) => {
      const x = Number(v);
      if (!Number.isInteger(x) || x < 0) throw new InputError(CLI, '--seed', `expected a non-negative integer, got "${v}"`);
      return x;
    }, 1)
    .option(`--time-limit ${SECONDS}`, 'stop the Monte Carlo after this many seconds (result marked incomplete)', positive('--time-limit', false))
    .option('--witnesses <n>', 'hole witness points listed per method', positiveInt('--witnesses'), 10)
    .option('--json', 'print the report as JSON')
    .option('--no-progress', 'no progress line on stderr')
    .option('-q, --quiet', 'print nothing; the exit code tells (0 no holes, 1 holes)')
    .action((tableFile: string, problemArg: string | undefined, o: GapsCliOptions) => {
      if (problemArg !== undefined && o.problem !== undefined && problemArg !== o.problem)
        throw new InputError(CLI, '--problem', `two different problem files given ("${problemArg}" as an argument and "${o.problem}")`);
      const problemFile = o.problem ?? problemArg;
      const table = readTableFile(tableFile);
      const { mpqp } = loadTableProblem(table, tableFile, problemFile);
      const tty = o.progress && !o.quiet && process.stderr.isTTY;
      const report = analyseCoverage(table, mpqp, {
        samples: o.samples,
        seed: o.seed,
        timeLimit: o.timeLimit,
        maxWitnesses: o.witnesses,
        onProgress: tty ? (d, n) => process.stderr.write(`\r  sampling ${d}/${n}`) : undefined,
      });
      if (tty) process.stderr.write('\r\x1b[K');
      if (!o.quiet) process.stdout.write(o.json ? JSON.stringify(report, null, 1) + '\n' : formatReport(report));
      if (report.hasHoles) process.exitCode = EXIT.found;
    });
}
