import type { Command } from 'commander';
import { readFileSync } from 'node:fs';
import { InputError } from '../io/errors.js';
import { writeFileAtomic } from '../io/atomic.js';
import { checkOutputPath } from '../io/output.js';
import { EXIT } from './exit.js';
import { createdNote } from './common.js';
import { readTableFile } from '../table/file.js';
import { problemHash } from '../table/build.js';
import { thetaBlock } from '../formulation/layout.js';
import { runAudit, type EmbeddedData } from '../check/audit.js';
import { consoleSummary, renderAuditHtml, renderAuditMarkdown, type AuditFigure } from '../check/audit-report.js';
import { solveOnlineQp } from '../check/onlineqp.js';
import { certifyFloat } from '../check/certify.js';
import { emit } from '../emit/index.js';
import { targetPrecisions } from '../emit/targets/index.js';
import { FixedOverflowError, type FixedBuild } from '../emit/fixed.js';
import type { EmitArrays } from '../emit/arrays.js';
import { certifyFixed } from '../check/certify-fixed.js';
import { analyseSlice } from '../check/gaps.js';
import { makeSliceSpec } from '../partition/slice.js';
import { renderMapSvg } from '../plot/svg.js';
import { renderTimePlotSvg } from '../plot/timeplot.js';
import type { RunResult, SimulationSetup } from '../check/simulate.js';
import type { TableFile } from '../table/format.js';
import type { MpqpProblem } from '../mpqp/types.js';
import { loadTableProblem, nonNegativeInt, positiveInt } from './map.js';

const CLI = '(command line)';

interface AuditCliOptions {
  quiet?: boolean;
  problem?: string;
  output?: string;
  json?: boolean;
  md?: boolean;
  samples: number;
  seed: number;
  steps: number;
  precision: string;
  search: 'tree' | 'sequential';
}

function toolVersion(): string {
  try {
    return JSON.parse(readFileSync(new URL('../../../package.json', import.meta.url), 'utf8')).version ?? 'unknown';
  } catch {
    return 'unknown';
  }
}

/** Principal slices: consecutive pairs of θ entries (first three pairs), the other entries at the box centre. */
function coverageMaps(table: TableFile, mpqp: MpqpProblem): AuditFigure[] {
  const nt = table.dims.ntheta;
  if (nt < 2) return [];
  const pairs: [number, number][] = [];
  for (let i = 0; i + 1 < nt && pairs.length < 3; i += 2) pairs.push([i, i + 1]);
  if (nt % 2 === 1 && pairs.length < 3 && nt > 2) pairs.push([nt - 2, nt - 1]);
  return pairs.map((axes) => {
    const spec = makeSliceSpec(table.box, axes);
    const slice = analyseSlice(table, mpqp, spec);
    const names = table.thetaNames;
    return {
      title: `Slice ${names[axes[0]]} × ${names[axes[1]]}`,
      svg: renderMapSvg(table, slice).svg,
      method: 'exact polygons of every region cut by the plane (half-plane clipping); the feasible part of the plane from support LPs; holes are the feasible part no polygon covers (polygon difference).',
      source: `the table's regions; feasibility from the mpQP of the problem${nt > 2 ? '; other entries fixed at the box centre' : ''}.`,
    };
  });
}

/** The C build for the options given, its certificate (float or fixed point) and its cost. */
function embeddedBuild(table: TableFile, precision: string, search: 'tree' | 'sequential', seed: number): EmbeddedData {
  const none = { worstMultiplyAdds: 0, worstComparisons: 0, worstDepth: 0, bytes: 0 };
  try {
    const build = emit<EmitArrays | FixedBuild>(table, { lang: 'c', precision, search, prefix: 'audit_law' });
    const cost = { worstMultiplyAdds: build.cost.worstMultiplyAdds, worstComparisons: build.cost.worstComparisons, worstDepth: build.cost.worstDepth, bytes: build.cost.bytes[precision]?.total ?? 0 };
    if (precision === 'double') return { precision, search, certificate: null, cost };
    if (precision === 'float') {
      const c = certifyFloat(table, build.arrays as EmitArrays, { seed });
      return { precision, search, cost, certificate: { safe: c.safe, verdict: c.verdict, maxAbsDiff: c.maxAbsDiff, tolerance: c.tolerance, points: c.points.total, lost: c.lostInFloat, worstTheta: c.worstTheta } };
    }
    const c = certifyFixed(table, build.arrays as FixedBuild, { seed });
    return { precision, search, cost, certificate: { safe: c.safe, verdict: c.verdict, maxAbsDiff: c.maxAbsDiff, tolerance: c.tolerance, points: c.points.total, lost: c.lostInFixed, worstTheta: c.worstTheta } };
  } catch (e) {
    // a fixed-point format too narrow for the table cannot be built at all: the check fails with the reason
    if (!(e instanceof FixedOverflowError)) throw e;
    return { precision, search, cost: none, certificate: { safe: false, verdict: `NOT SAFE: no ${precision} build (${e.message})`, maxAbsDiff: Infinity, tolerance: 0, points: 0, lost: 0, worstTheta: null } };
  }
}

function choice<T extends string>(flag: string, allowed: readonly T[]) {
  return (v: string): T => {
    if (!(allowed as readonly string[]).includes(v)) throw new InputError(CLI, flag, `expected ${allowed.join(' or ')}, got "${v}"`);
    return v as T;
  };
}

export function register(program: Command): void {
  program
    .command('audit')
    .description('one report per table: identity, agreement with the online QP, coverage, recursive feasibility by LP, stability evidence, embedded build, closed-loop runs (exit 1 when a check fails)')
    .argument('<table>', 'table file written by tessera solve')
    .option('--problem <file>', 'problem file (default: the problem stored in the table)')
    .option('-o, --output <file>', 'report file (HTML by default; Markdown with --md, JSON with --json); without it --md/--json print to stdout')
    .option('--json', 'the report as JSON')
    .option('--md', 'the report as Markdown text')
    .option('--samples <n>', 'seeded sample size (agreement; coverage and stability use multiples of it)', positiveInt('--samples'), 2000)
    .option('--seed <n>', 'seed of every sample', nonNegativeInt('--seed'), 1)
    .option('--steps <n>', 'steps of each closed-loop run', positiveInt('--steps'), 60)
    .option('--precision <p>', `embedded build: ${targetPrecisions('c').join(', ')}`, choice('--precision', targetPrecisions('c')), 'float')
    .option('--search <s>', 'embedded build: tree or sequential', choice('--search', ['tree', 'sequential'] as const), 'tree')
    .option('-q, --quiet', 'print nothing but errors; the exit code tells (without -o the report is still printed)')
    .action((tableFile: string, o: AuditCliOptions) => {
      if (o.json && o.md) throw new InputError(CLI, '--json', 'give at most one of --json and --md');
      if (!o.output && !o.json && !o.md) throw new InputError(CLI, '--output', 'give -o report.html (or --json / --md to print the report)');
      const created = o.output
        ? checkOutputPath(o.output, '-o', o.json ? { kind: 'file', extensions: ['.json'], what: 'a JSON report' } : o.md ? { kind: 'file', extensions: ['.md'], what: 'a Markdown report' } : { kind: 'file', extensions: ['.html', '.htm'], what: 'an HTML report' })
        : null;
      const table = readTableFile(tableFile);
      if (table.layout?.formulation === 'mpqp' || !thetaBlock(table.layout, 'state'))
        throw new InputError(tableFile, 'layout', 'this table holds a directly given mpQP: it has no plant, so invariance and closed-loop runs cannot be audited');
      if (table.regions.length === 0) throw new InputError(tableFile, 'regions', 'the table has no region: nothing to audit');
      const { loaded, mpqp } = loadTableProblem(table, tableFile, o.problem);
      const model = loaded.model;
      if (!model) throw new InputError(o.problem ?? tableFile, 'mpqp', 'the problem is a directly given mpQP: it has no plant, so invariance and closed-loop runs cannot be audited');
      const tty = process.stderr.isTTY;
      const stage = (s: string) => tty && process.stderr.write(`\r\x1b[K  audit: ${s}…`);

      stage('embedded build');
      const embedded = embeddedBuild(table, o.precision, o.search, o.seed);
      let loop: { runs: RunResult[]; setup: SimulationSetup } | null = null;
      const report = runAudit(
        {
          table,
          model,
          mpqp,
          recomputedHash: problemHash(table.problem),
          problemFileHash: o.problem ? problemHash(loaded.raw) : null,
          toolVersion: toolVersion(),
          online: (th) => {
            const r = solveOnlineQp(mpqp, th);
            return r.feasible ? r.z.slice(0, table.layout.lawSize) : null;
          },
          embedded,
          samples: o.samples,
          seed: o.seed,
          steps: o.steps,
          onStage: stage,
          onRuns: (runs, setup) => (loop = { runs, setup }),
        },
        tableFile,
      );
      let text: string;
      if (o.json) text = JSON.stringify(report, null, 1) + '\n';
      else if (o.md) text = renderAuditMarkdown(report);
      else {
        stage('figures');
        const l = loop as { runs: RunResult[]; setup: SimulationSetup } | null;
        const closedLoop: AuditFigure[] = l
          ? [
              {
                title: 'Closed-loop runs',
                svg: renderTimePlotSvg(l.runs, {
                  title: `${table.name}: closed-loop runs of the audit`,
                  names: l.setup.names,
                  limits: l.setup.limits,
                  tracked: thetaBlock(table.layout, 'reference')?.refersTo ?? [],
                  softLimits: l.setup.softLimits,
                  outputsAreStates: !thetaBlock(table.layout, 'disturbance') && model.C.every((row, i) => row.every((v, j) => v === (i === j ? 1 : 0))) && model.C.length === model.n,
                }),
                method: 'the simulate engine on the nominal model; the table law drives the plant, the online QP (quadprog) is solved beside it (dotted).',
                source: 'the runs of check 7 (first 8 drawn).',
              },
            ]
          : [];
        text = renderAuditHtml(report, { coverage: coverageMaps(table, mpqp), closedLoop });
      }
      if (tty) process.stderr.write('\r\x1b[K');
      if (o.output) {
        writeFileAtomic(o.output, text);
        if (!o.quiet) {
          if (created) createdNote(created);
          process.stdout.write(`${table.name}: audit\n${consoleSummary(report)}  written ${o.output}\n`);
        }
      } else process.stdout.write(text);
      if (!report.passed) process.exitCode = EXIT.found;
    });
}
