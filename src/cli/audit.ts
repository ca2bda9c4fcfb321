import type { Command } from 'commander';
import { readFileSync } from 'node:fs';
import { InputError } from '../io/errors.js';
import { writeFileAtomic } from '../io/atomic.js';
import { checkOutputPath } from '../io/output.js';
import { EXIT } from './exit.js';
import { createdNote } from './common.js';
import { readTableFile } from '../table/file.js';
import { consoleSummary, renderAuditMarkdown } from '../check/audit-report.js';
import { auditHtml, auditTable, checkAuditable, checkAuditSearch } from '../check/audit-table.js';
import { SEARCH_CHOICES, type SearchChoice } from '../emit/index.js';
import { targetPrecisions } from '../emit/targets/index.js';
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
  search: SearchChoice;
}

function toolVersion(): string {
  try {
    return JSON.parse(readFileSync(new URL('../../../package.json', import.meta.url), 'utf8')).version ?? 'unknown';
  } catch {
    return 'unknown';
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
    .option('--search <s>', `embedded build's point location, as for emit: ${SEARCH_CHOICES.join(', ')} (auto: the cost model picks; the fixed-point builds print tree or sequential)`, choice('--search', SEARCH_CHOICES), 'auto')
    .option('-q, --quiet', 'print nothing but errors; the exit code tells (without -o the report is still printed)')
    .action((tableFile: string, o: AuditCliOptions) => {
      if (o.json && o.md) throw new InputError(CLI, '--json', 'give at most one of --json and --md');
      if (!o.output && !o.json && !o.md) throw new InputError(CLI, '--output', 'give -o report.html (or --json / --md to print the report)');
      checkAuditSearch(o.precision, o.search);
      const created = o.output
        ? checkOutputPath(o.output, '-o', o.json ? { kind: 'file', extensions: ['.json'], what: 'a JSON report' } : o.md ? { kind: 'file', extensions: ['.md'], what: 'a Markdown report' } : { kind: 'file', extensions: ['.html', '.htm'], what: 'an HTML report' })
        : null;
      const table = readTableFile(tableFile);
      checkAuditable(table, tableFile);
      const problem = loadTableProblem(table, tableFile, o.problem);
      const tty = process.stderr.isTTY;
      const stage = (s: string) => tty && process.stderr.write(`\r\x1b[K  audit: ${s}…`);
      const outcome = auditTable(table, problem, {
        precision: o.precision,
        search: o.search,
        samples: o.samples,
        seed: o.seed,
        steps: o.steps,
        separateProblem: !!o.problem,
        toolVersion: toolVersion(),
        tableFile,
        problemFile: o.problem,
        onStage: stage,
      });
      const { report } = outcome;
      let text: string;
      if (o.json) text = JSON.stringify(report, null, 1) + '\n';
      else if (o.md) text = renderAuditMarkdown(report);
      else {
        stage('figures');
        text = auditHtml(table, outcome);
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
