import { InputError } from '../io/input-error.js';
import { tol } from '../tol.js';
import type { CriticalRegion } from '../mpqp/types.js';
import { TABLE_FORMAT, TABLE_VERSION, TABLE_VERSIONS_READ, type TableFile } from './format.js';
import { locateRegion, locateScan } from './locator.js';
import { regionJson } from './region-store.js';

const REGIONS_MARK = '\u0000regions\u0000';

/**
 * The text of a table in pieces, deterministically (fixed key order as built, no run-dependent
 * fields): the header keys indented by one space, then `"regions": [`, then one region per line
 * (compact JSON), then ` ]` and the keys after it. Joined, the pieces are `tableToJson`; a writer
 * that streams them never holds the whole text (a 100k-region table can pass V8's string limit).
 */
export function* tableChunks(table: TableFile): Generator<string> {
  const head = JSON.stringify({ ...table, regions: REGIONS_MARK }, null, 1);
  const mark = JSON.stringify(REGIONS_MARK);
  // the mark is the last string of its kind: only numbers, booleans and a stop reason follow it
  const at = head.lastIndexOf(mark);
  yield head.slice(0, at) + '[\n';
  const n = table.regions.length;
  // a region's text rendered ahead (the threaded exploration renders it while the workers run) is used: the same text
  for (let i = 0; i < n; i++) yield regionJson(table.regions[i]) + (i + 1 < n ? ',\n' : '\n');
  yield ' ]' + head.slice(at + mark.length) + '\n';
}

/** Serialise a table deterministically as one string (`tableChunks` joined): for tables that fit in a string. */
export function tableToJson(table: TableFile): string {
  let out = '';
  for (const c of tableChunks(table)) out += c;
  return out;
}

/**
 * Parse and check the text of a table file (what `tableToJson` wrote). `file` only names the
 * source in error messages. Every failure is an InputError naming the file and key.
 */
export function parseTableJson(text: string, file: string): TableFile {
  let raw: unknown;
  try {
    raw = JSON.parse(text);
  } catch (e) {
    throw new InputError(file, '', `not valid JSON (${(e as Error).message})`);
  }
  return checkTable(raw, file);
}

/** Validate the structure of a parsed table object (dimensions of every region). */
export function checkTable(raw: unknown, file: string): TableFile {
  if (typeof raw !== 'object' || raw === null) throw new InputError(file, '', 'a table file must be a JSON object');
  const t = raw as Record<string, unknown>;
  if (t.format !== TABLE_FORMAT) throw new InputError(file, 'format', `expected "${TABLE_FORMAT}", got ${JSON.stringify(t.format)}`);
  if (!TABLE_VERSIONS_READ.includes(t.version as number))
    throw new InputError(file, 'version', `unsupported table version ${JSON.stringify(t.version)} (this build reads ${TABLE_VERSIONS_READ.join(' and ')})`);
  if (t.version === 2) {
    // a version 2 table is a full table; read it as version 3 with the same meaning
    if ('lean' in t) throw new InputError(file, 'lean', 'a version 2 table has no "lean" key');
    const { format, version: _v, ...rest } = t;
    return checkTable({ format, version: TABLE_VERSION, lean: false, ...rest }, file);
  }
  if (typeof t.lean !== 'boolean') throw new InputError(file, 'lean', `must be true or false, got ${JSON.stringify(t.lean)}`);
  const lean = t.lean;
  const dims = t.dims as TableFile['dims'] | undefined;
  if (!dims || !Number.isInteger(dims.ntheta) || !Number.isInteger(dims.nu)) throw new InputError(file, 'dims', 'missing or malformed dimensions');
  if (!Array.isArray(t.regions)) throw new InputError(file, 'regions', 'must be an array');
  const nt = dims.ntheta;
  const nu = dims.nu;
  (t.regions as unknown[]).forEach((r, i) => {
    const key = `regions[${i}]`;
    const reg = r as CriticalRegion;
    if (!reg || !Array.isArray(reg.A) || !Array.isArray(reg.b) || reg.A.length !== reg.b.length)
      throw new InputError(file, key, 'half-spaces A, b missing or of different lengths');
    reg.A.forEach((row, j) => {
      if (!Array.isArray(row) || row.length !== nt) throw new InputError(file, `${key}.A[${j}]`, `must have ${nt} entries`);
    });
    if (!reg.law || !Array.isArray(reg.law.F) || reg.law.F.length !== nu || !Array.isArray(reg.law.g) || reg.law.g.length !== nu)
      throw new InputError(file, `${key}.law`, `must map ${nt} parameters to ${nu} inputs`);
    reg.law.F.forEach((row, j) => {
      if (!Array.isArray(row) || row.length !== nt) throw new InputError(file, `${key}.law.F[${j}]`, `must have ${nt} entries`);
    });
    if (!lean && (!reg.moves || !Array.isArray(reg.moves.F) || !reg.value || !Array.isArray(reg.value.Q)))
      throw new InputError(file, `${key}`, 'moves or value missing, and the table does not say "lean": true');
    if (lean && (reg.moves !== undefined || reg.value !== undefined))
      throw new InputError(file, `${key}`, 'a lean table keeps no moves or value, but this region has them');
  });
  return raw as TableFile;
}

export { regionContains } from './locator.js';

/** Evaluate an affine map at θ. */
export function applyAffine(map: { F: number[][]; g: number[] }, theta: ArrayLike<number>): number[] {
  const { F, g } = map;
  const u = new Array<number>(F.length);
  for (let i = 0; i < F.length; i++) {
    const row = F[i];
    let s = g[i];
    for (let j = 0; j < row.length; j++) s += row[j] * theta[j];
    u[i] = s;
  }
  return u;
}

/**
 * Sequential point location: index of the region that holds θ, or −1 when none does (outside the
 * box, infeasible, or a hole). The first region holding θ exactly (every row ≤ b) wins; only when
 * none does, the region within `slack` with the least largest residual. On shared facets the
 * lowest index wins; the law is continuous there, so the value of u(0) does not depend on that choice.
 */
export function locateSequential(regions: CriticalRegion[], theta: ArrayLike<number>, slack: number = tol.inside): number {
  return locateScan(regions, theta, slack).region;
}

export interface Evaluation {
  region: number; // index into table.regions, −1 when none holds θ
  u: number[] | null; // u(0), null when region = −1
}

/**
 * u(0) at one θ (nθ entries, the table's units and order), located at the table tolerance: a
 * region holding θ exactly wins, else the least residual within tol.inside (`locatePoint`).
 * `region` is the index into `table.regions`, −1 (and `u` null) when no region holds θ
 * (outside the box, infeasible, a hole, or a NaN entry). `u` is a new array.
 */
export function evaluateTable(table: TableFile, theta: ArrayLike<number>): Evaluation {
  if (theta.length !== table.dims.ntheta) throw new Error(`θ has ${theta.length} entries, the table expects ${table.dims.ntheta}`);
  const region = locateRegion(table.regions, theta, tol.inside, table.box);
  return { region, u: region < 0 ? null : applyAffine(table.regions[region].law, theta) };
}
