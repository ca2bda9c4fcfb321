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
 * The summary lines about the facet cover: the unresolved-pieces warning with its causes, and the
 * facets that left the vertex-list cover for the LP difference, by check (none when both are 0).
 */
export function coverLines(s: Pick<PartitionStats, 'unresolvedPieces' | 'causes'>): string[] {
  const c = sumCauses(s.causes);
  const lines: string[] = [];
  if (s.unresolvedPieces > 0) {
    const why = [
      [c.noRegion, 'no full-dimensional region could be built across'],
      [c.noSlice, 'no region reached held the piece'],
      [c.guard, 'a facet reached its bound of 1 000 landings'],
    ] as const;
    const said = why.filter(([n]) => n > 0).map(([n, t]) => `${n}: ${t}`);
    lines.push(`  WARNING: ${s.unresolvedPieces} facet piece(s) could not be resolved into a full-dimensional region${said.length ? ` (${said.join('; ')})` : ''}; run \`tessera gaps\` on the table`);
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
