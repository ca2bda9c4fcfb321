/** Small helpers shared by the command files: option parsers and notices. */
import { InputError } from '../io/errors.js';
import { sumCauses, type PartitionStats } from '../mpqp/types.js';

export const CLI = '(command line)';

/** The one spelling of a time budget in every command's help. */
export const SECONDS = '<seconds>';

export function positive(flag: string, integer: boolean) {
  return (v: string): number => {
    const x = Number(v);
    if (!Number.isFinite(x) || x <= 0 || (integer && !Number.isInteger(x)))
      throw new InputError(CLI, flag, `expected a positive ${integer ? 'integer' : 'number'}, got "${v}"`);
    return x;
  };
}

export function choice<T extends string>(flag: string, values: readonly T[]) {
  return (v: string): T => {
    if (!(values as readonly string[]).includes(v)) throw new InputError(CLI, flag, `expected one of ${values.join(', ')}, got "${v}"`);
    return v as T;
  };
}

/**
 * Tell the user that a missing output directory was created: on stdout with the command's summary,
 * or on stderr when stdout carries data (JSON).
 */
export function createdNote(dir: string, stream: 'stdout' | 'stderr' = 'stdout'): void {
  process[stream].write(`tessera: note: created the directory ${dir}\n`);
}

/**
 * The summary lines about the facet cover: the unresolved facets (a canonical partition's: those
 * the final regions leave a piece of uncovered), the exploration's give-ups with their causes
 * (diagnostics of the run, not stored in the table), and the facets that left the vertex-list cover
 * for the LP difference, by check (none when all are 0). `s` without `giveUps` is an exploration's
 * (a part file's), whose give-ups `join` re-checks.
 */
export function coverLines(s: Pick<PartitionStats, 'unresolvedPieces' | 'causes' | 'giveUps' | 'gaveUpAt'>): string[] {
  const c = sumCauses(s.causes);
  const lines: string[] = [];
  const canonical = s.giveUps !== undefined;
  const giveUps = canonical ? s.giveUps! : s.unresolvedPieces;
  if (canonical && s.unresolvedPieces > 0)
    lines.push(`  WARNING: ${s.unresolvedPieces} facet(s) keep a piece that no region of the table covers (the exploration gave up there, and the re-check against the final regions found it uncovered); run \`tessera gaps\` on the table`);
  if (giveUps > 0) {
    const why = [
      [c.noRegion, 'no full-dimensional region could be built across'],
      [c.noSlice, 'no region reached held the piece'],
      [c.guard, 'a facet reached its bound of 1 000 landings'],
    ] as const;
    const said = why.filter(([n]) => n > 0).map(([n, t]) => `${n}: ${t}`);
    const facets = s.gaveUpAt?.length ?? 0;
    const after = canonical
      ? `re-checked against the final regions: ${facets - s.unresolvedPieces} of those ${facets} facet(s) covered`
      : '`tessera join` re-checks them against the final regions';
    const probed = c.repaired > 0 ? `; probes across the uncovered pieces found ${c.repaired} more region(s)` : '';
    lines.push(`  exploration diagnostics (depend on the run; not in the table): ${giveUps} facet piece(s) given up on at ${facets} facet(s)${said.length ? ` (${said.join('; ')})` : ''}${probed}; ${after}`);
  }
  const fb = [
    [c.fallbackRank, 'a vertex without full-rank tight rows'],
    [c.fallbackBox, 'a vertex on the padding box'],
    [c.fallbackVerts, 'over 4 000 vertices'],
    [c.fallbackGuard, '1 000 landings'],
  ] as const;
  const n = fb.reduce((t, [k]) => t + k, 0);
  if (n > 0) lines.push(`  note: ${n} facet(s) covered by the LP difference after their vertex list failed a check (${fb.filter(([k]) => k > 0).map(([k, t]) => `${k}: ${t}`).join('; ')})`);
  return lines;
}
