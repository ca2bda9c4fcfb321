/**
 * Field-level checks for the problem file. Each failure throws an InputError naming the file,
 * the key path (e.g. `plant.A[1][0]`) and the reason, on one line.
 */
import { InputError } from '../io/input-error.js';
import { tol } from '../tol.js';
import { isPositiveDefinite, maxAbs, minEigenvalueSymmetric, type Mat } from './dense.js';

export type Obj = Record<string, unknown>;

export function describe(v: unknown): string {
  if (v === null) return 'null';
  if (v === undefined) return 'nothing';
  if (Array.isArray(v)) return `an array of length ${v.length}`;
  if (typeof v === 'string') return `the string ${JSON.stringify(v.length > 30 ? v.slice(0, 30) + '…' : v)}`;
  if (typeof v === 'number') return Number.isNaN(v) ? 'NaN' : `${v}`;
  if (typeof v === 'boolean') return `${v}`;
  return `an ${typeof v}`;
}

/** Levenshtein edit distance (two-row dynamic programme). */
export function editDistance(a: string, b: string): number {
  let prev = Array.from({ length: b.length + 1 }, (_, j) => j);
  for (let i = 1; i <= a.length; i++) {
    const cur = [i];
    for (let j = 1; j <= b.length; j++)
      cur[j] = Math.min(prev[j] + 1, cur[j - 1] + 1, prev[j - 1] + (a[i - 1] === b[j - 1] ? 0 : 1));
    prev = cur;
  }
  return prev[b.length];
}

/** The closest allowed key when it is near enough to be a likely typo. */
export function closestKey(key: string, allowed: readonly string[]): string | null {
  let best: string | null = null;
  let bestD = Infinity;
  for (const k of allowed) {
    const d = editDistance(key.toLowerCase(), k.toLowerCase());
    if (d < bestD) {
      bestD = d;
      best = k;
    }
  }
  return best !== null && bestD <= Math.max(2, Math.floor(best.length / 3)) ? best : null;
}

export function join(path: string, key: string | number): string {
  if (typeof key === 'number') return `${path}[${key}]`;
  return path ? `${path}.${key}` : key;
}

export class Checker {
  constructor(readonly file: string) {}

  fail(key: string, reason: string): never {
    throw new InputError(this.file, key, reason);
  }

  object(v: unknown, key: string, allowed: readonly string[]): Obj {
    if (typeof v !== 'object' || v === null || Array.isArray(v))
      this.fail(key || '(top level)', `expected an object, got ${describe(v)}`);
    const o = v as Obj;
    for (const k of Object.keys(o)) {
      if (allowed.includes(k)) continue;
      const hint = closestKey(k, allowed);
      this.fail(
        join(key, k),
        `unknown key "${k}"; ${hint ? `did you mean "${hint}"?` : `allowed here: ${allowed.join(', ')}`}`,
      );
    }
    return o;
  }

  require(o: Obj, path: string, k: string, what: string): unknown {
    if (o[k] === undefined) this.fail(join(path, k), `missing required key (${what})`);
    return o[k];
  }

  number(v: unknown, key: string): number {
    if (typeof v !== 'number') this.fail(key, `expected a number, got ${describe(v)}`);
    if (!Number.isFinite(v)) this.fail(key, `expected a finite number, got ${describe(v)}`);
    return v;
  }

  integer(v: unknown, key: string, min: number, max: number, what: string): number {
    const x = this.number(v, key);
    if (!Number.isInteger(x)) this.fail(key, `expected an integer (${what}), got ${x}`);
    if (x < min || x > max)
      this.fail(key, `${what} must satisfy ${max === Infinity ? `value ≥ ${min}` : `${min} ≤ value ≤ ${max}`}, got ${x}`);
    return x;
  }

  string(v: unknown, key: string): string {
    if (typeof v !== 'string') this.fail(key, `expected a string, got ${describe(v)}`);
    return v;
  }

  array(v: unknown, key: string, length?: number, what?: string): unknown[] {
    if (!Array.isArray(v)) this.fail(key, `expected an array, got ${describe(v)}`);
    if (length !== undefined && v.length !== length)
      this.fail(key, `expected ${length} entries${what ? ` (${what})` : ''}, got ${v.length}`);
    return v;
  }

  /** A rows×cols matrix of finite numbers; rows/cols undefined means "any, at least 1". */
  matrix(v: unknown, key: string, rows?: number, cols?: number, what?: string): Mat {
    const dims = `${rows ?? 'r'}×${cols ?? 'c'}${what ? `, ${what}` : ''}`;
    if (!Array.isArray(v)) this.fail(key, `expected a matrix (array of rows, ${dims}), got ${describe(v)}`);
    if (rows !== undefined && v.length !== rows) this.fail(key, `expected ${rows} rows (${dims}), got ${v.length}`);
    if (v.length === 0) this.fail(key, 'expected at least one row, got an empty array');
    let width = cols;
    return v.map((row, i) => {
      const rk = join(key, i);
      if (!Array.isArray(row)) this.fail(rk, `expected a row (array of numbers), got ${describe(row)}`);
      if (width === undefined) {
        if (row.length === 0) this.fail(rk, 'expected at least one column, got an empty row');
        width = row.length;
      }
      if (row.length !== width) this.fail(rk, `expected ${width} columns (${dims}), got ${row.length}`);
      return row.map((x, j) => this.number(x, join(rk, j)));
    });
  }

  symmetric(M: Mat, key: string): void {
    const lim = tol.symmetry * (1 + maxAbs(M));
    for (let i = 0; i < M.length; i++)
      for (let j = i + 1; j < M.length; j++)
        if (Math.abs(M[i][j] - M[j][i]) > lim)
          this.fail(
            `${key}[${i}][${j}]`,
            `matrix is not symmetric: entry is ${M[i][j]} but [${j}][${i}] is ${M[j][i]} (tolerance tol.symmetry·(1+max|M|) = ${lim.toExponential(2)})`,
          );
  }

  psd(M: Mat, key: string): void {
    this.symmetric(M, key);
    const floor = -tol.psd * (1 + maxAbs(M));
    const lmin = minEigenvalueSymmetric(M);
    if (lmin < floor)
      this.fail(
        key,
        `matrix is not positive semidefinite: smallest eigenvalue ${lmin.toPrecision(6)} < −tol.psd·(1+max|M|) = ${floor.toExponential(2)}`,
      );
  }

  pd(M: Mat, key: string): void {
    this.symmetric(M, key);
    if (!isPositiveDefinite(M))
      this.fail(
        key,
        `matrix is not positive definite: a Cholesky pivot is ≤ tol.pd·(1+max|M_ii|) = ${(tol.pd * (1 + Math.max(...M.map((r, i) => Math.abs(r[i]))))).toExponential(2)} (smallest eigenvalue ${minEigenvalueSymmetric(M).toPrecision(6)})`,
      );
  }
}
