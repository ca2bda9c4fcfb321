import type { Command } from 'commander';
import { basename, dirname, join } from 'node:path';
import { loadProblem } from '../problem/load.js';
import { solveProblem } from '../table/solve.js';
import { writeTableFile } from '../table/file.js';
import { InputError } from '../io/errors.js';
import type { Layout } from '../formulation/layout.js';

export function defaultTablePath(problemPath: string): string {
  const base = basename(problemPath).replace(/\.(json|ya?ml)$/i, '');
  return join(dirname(problemPath), `${base}.table.json`);
}

function positive(flag: string, integer: boolean) {
  return (v: string): number => {
    const x = Number(v);
    if (!Number.isFinite(x) || x <= 0 || (integer && !Number.isInteger(x)))
      throw new InputError('(command line)', flag, `expected a positive ${integer ? 'integer' : 'number'}, got "${v}"`);
    return x;
  };
}

export function register(program: Command): void {
  program
    .command('solve')
    .description('compute the critical-region partition of a problem file and write the table')
    .argument('<problem>', 'problem file (.json, .yaml or .yml)')
    .option('-o, --output <table>', 'table file to write (default: <problem>.table.json beside the problem)')
    .option('--max-regions <n>', 'stop after n regions; the table is marked incomplete', positive('--max-regions', true))
    .option('--time-limit <seconds>', 'stop after this many seconds; the table is marked incomplete', positive('--time-limit', false))
    .option('--lp <engine>', 'LP engine: kernel (typed-array, default) or reference (javascript-lp-solver)', 'kernel')
    .option('-q, --quiet', 'print nothing but errors')
    .action((problemPath: string, opts: { output?: string; maxRegions?: number; timeLimit?: number; lp: string; quiet?: boolean }) => {
      if (opts.lp !== 'kernel' && opts.lp !== 'reference')
        throw new InputError('(command line)', '--lp', `expected "kernel" or "reference", got "${opts.lp}"`);
      const out = opts.output ?? defaultTablePath(problemPath);
      const loaded = loadProblem(problemPath);
      const live = process.stderr.isTTY && !opts.quiet;
      const { mpqp, partition, table, seconds } = solveProblem(loaded, {
        maxRegions: opts.maxRegions,
        timeLimit: opts.timeLimit,
        lp: opts.lp,
        onProgress: live
          ? (p) =>
              process.stderr.write(
                `\r  candidates ${p.candidates}  regions ${p.regions}  LPs ${p.lps}  ${p.elapsedSeconds.toFixed(1)} s `,
              )
          : undefined,
      });
      if (live) process.stderr.write('\r\x1b[K');
      writeTableFile(out, table);
      if (opts.quiet) return;
      const s = partition.stats;
      const lines = [
        `${table.name}: ${s.regions} regions, ${s.candidates} candidates, ${s.lps} LPs, ${s.qps} point QPs, ${seconds.toFixed(3)} s (${(s.regions / Math.max(seconds, 1e-9)).toFixed(0)} regions/s)`,
        `  θ = [${table.thetaNames.join(', ')}], ${loaded.model ? 'u' : 'law'} = [${table.inputNames.join(', ')}], ${layoutSummary(table.layout)}, ${mpqp.nc} constraint rows`,
        s.complete
          ? `  complete: yes — table written to ${out}`
          : `  complete: NO (stopped: ${s.stopReason}) — the table written to ${out} is INCOMPLETE and must not be deployed`,
      ];
      if (s.unresolvedPieces > 0)
        lines.push(`  WARNING: ${s.unresolvedPieces} facet piece(s) could not be resolved into a full-dimensional region; run \`tessera gaps\` on the table`);
      process.stdout.write(lines.join('\n') + '\n');
    });
}

/** "8 free moves, 2 state slacks" — the z blocks and the features, in words. */
function layoutSummary(layout: Layout): string {
  const words: Record<string, string> = { moves: 'free moves', stateSlack: 'state slacks', outputSlack: 'output slacks', decision: 'decision variables' };
  const parts = layout.z.map((b) => `${b.size} ${words[b.kind]}`);
  parts.unshift(layout.formulation);
  if (layout.terminalSet) parts.push(`terminal set ${layout.terminalSet.rows} rows (determination index ${layout.terminalSet.index})`);
  return parts.join(', ');
}
