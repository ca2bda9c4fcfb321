import type { Command } from 'commander';
import { readTextInput, InputError } from '../io/errors.js';
import { checkOutputPath } from '../io/output.js';
import { joinParts, parsePartJson } from '../table/part.js';
import { writeTableFile } from '../table/file.js';
import { coverLines, createdNote, CLI } from './common.js';
import { indexOption, writeIndexAfter } from './index-file.js';

/** `a/b/x.part-1-of-4.json` → `a/b/x.table.json`; null when the name does not follow that pattern. */
export function defaultJoinPath(partPath: string): string | null {
  return /\.part-\d+-of-\d+\.json$/i.test(partPath) ? partPath.replace(/\.part-\d+-of-\d+\.json$/i, '.table.json') : null;
}

export function register(program: Command): void {
  program
    .command('join')
    .description('join the k part files of `tessera solve --part i/k` into the table one run over the whole box writes (the same bytes)')
    .argument('<parts...>', 'the k part files (.json), in any order')
    .option('-o, --output <table>', 'table file to write, .json (default: the first part\'s name with .part-i-of-k replaced by .table)')
    .option('--index [file]', 'also write the point-location index (k-d tree) of the table: to FILE.index, or without FILE to <table>.index, where `tessera evaluate` finds it (the bytes `tessera evaluate --index` writes)')
    .option('-q, --quiet', 'print nothing but errors')
    .action((partPaths: string[], opts: { output?: string; quiet?: boolean; index?: string | true }) => {
      const out = opts.output ?? defaultJoinPath(partPaths[0]);
      if (!out) throw new InputError(CLI, '-o', `give the table file to write (${partPaths[0]} is not named NAME.part-i-of-k.json)`);
      const created = checkOutputPath(out, opts.output ? '-o' : 'default output', { kind: 'file', extensions: ['.json'], what: 'a JSON table' });
      const indexPath = indexOption(opts.index, out);
      joinCommand(partPaths, out, created, !!opts.quiet);
      // once the joined regions are let go (joinCommand returned): the table read back and its tree built
      if (indexPath) writeIndexAfter(out, indexPath, { quiet: opts.quiet, live: process.stderr.isTTY && !opts.quiet });
    });
}

/** Join the part files into the table `out` and print the summary (unless quiet). */
function joinCommand(partPaths: string[], out: string, created: string | null, quiet: boolean): void {
  const parts = partPaths.map((p) => parsePartJson(readTextInput(p, 'part file'), p));
  const { table, partition } = joinParts(parts, partPaths);
  writeTableFile(out, table);
  if (quiet) return;
  if (created) createdNote(created);
  const s = partition.stats;
  const found = parts.reduce((n, p) => n + p.regions.length, 0);
  const lines = [
    `${table.name}: ${s.regions} regions from ${parts.length} parts (${found} listed, a region cut by a sub-box face in every part it meets)`,
    s.complete ? `  complete: yes — table written to ${out}` : `  complete: NO (a part stopped: ${s.stopReason}) — the table written to ${out} is INCOMPLETE and must not be deployed`,
  ];
  lines.push(...coverLines(s));
  process.stdout.write(lines.join('\n') + '\n');
}
