/** Points in, evaluations out: the text formats of `tessera evaluate`, pure (the caller reads files). */
import { twoProductLow } from '../linalg/dense.js';
import { InputError } from '../io/input-error.js';
import { applyAffine, evaluateTable } from './table.js';
import type { TableFile } from './format.js';
import { clampInputs } from './clamp.js';
import { locateScan, sharedTableLocator } from './locator.js';
import { tol } from '../tol.js';
import type { BoxIndex } from './boxindex.js';
import type { AffineMap, CriticalRegion } from '../mpqp/types.js';
import { isFullTable, type EvaluatedTable } from './evaluate-table.js';

/**
 * Match a header line to the θ names (contract, `tessera evaluate`): every θ entry named exactly
 * once, in any order. Returns, for each θ entry, the column that holds it.
 */
function headerColumns(path: string, line: number, cells: string[], names: string[]): number[] {
  const key = `line ${line}`;
  const list = names.join(', ');
  const seen = new Map<string, number>();
  cells.forEach((c, k) => {
    if (!names.includes(c)) throw new InputError(path, key, `unknown column "${c}" in the header (θ is ${list})`);
    if (seen.has(c)) throw new InputError(path, key, `column "${c}" named twice in the header (columns ${seen.get(c)! + 1} and ${k + 1})`);
    seen.set(c, k);
  });
  const missing = names.filter((n) => !seen.has(n));
  if (missing.length) throw new InputError(path, key, `header lacks ${missing.map((n) => `"${n}"`).join(', ')} (θ is ${list})`);
  return names.map((n) => seen.get(n)!);
}

/**
 * Parse the points CSV: one θ per line, comma-separated, an optional header line of names. With a
 * header the columns are matched by name (any order); without one they are θ in table order.
 * Points are returned in θ order, as fresh arrays the caller owns; `path` names the source in errors.
 */
export function parsePointsCsv(text: string, path: string, thetaNames: string[]): number[][] {
  const ntheta = thetaNames.length;
  const lines = text.split(/\r?\n/).map((l) => l.trim());
  const points: number[][] = [];
  let first = true;
  let order: number[] | null = null;
  lines.forEach((line, i) => {
    if (line === '' || line.startsWith('#')) return;
    const cells = line.split(',').map((c) => c.trim());
    const nums = cells.map(Number);
    if (first) {
      first = false;
      // a header is a line of names: no cell of it reads as a number
      if (cells.every((c, k) => c === '' || Number.isNaN(nums[k]))) {
        order = headerColumns(path, i + 1, cells, thetaNames);
        return;
      }
    }
    if (cells.length !== ntheta) throw new InputError(path, `line ${i + 1}`, `expected ${ntheta} values (θ has ${ntheta} entries), got ${cells.length}`);
    nums.forEach((v, k) => {
      if (cells[k] === '' || !Number.isFinite(v)) throw new InputError(path, `line ${i + 1}, column ${k + 1}`, `"${cells[k]}" is not a finite number`);
    });
    points.push(order ? order.map((k) => nums[k]) : nums);
  });
  return points;
}

/** One evaluated point: θ as given, the region index (−1 = none) and u(0) (null when none). */
export interface PointEvaluation {
  theta: number[];
  region: number;
  u: number[] | null;
  /**
   * only for tables with soft limits: the slack values at θ by name (null in no region, in a
   * merged region, whose stored moves are exact on one member only, and everywhere in a lean
   * table, which keeps no moves)
   */
  slacks?: Record<string, number> | null;
}

/** How `evaluatePoints` treats u(0). */
export interface EvaluateOptions {
  /** saturate u(0) to the table's `inputLimits` (`clampInputs`); slack values are never clamped */
  clamp?: boolean;
  /**
   * the table's point-location index, when the caller has one (`tessera evaluate --index` reads it
   * from a file): used instead of the one built on first use (`sharedTableLocator`). It must be an
   * index of these regions built as `tableLocator` builds it; the answers are the same.
   */
  index?: BoxIndex | null;
}

/**
 * Evaluate the table law at each θ (`evaluateTable`: table tolerance, a region holding θ exactly
 * first). Each θ has nθ entries in the table's units and `thetaNames` order; `theta` of each
 * result is the caller's array, `u` (nu entries, `inputNames` order) and `slacks` are new.
 */
export function evaluatePoints(table: TableFile, points: number[][], options: EvaluateOptions = {}): PointEvaluation[] {
  // slack values: the z entries of the layout's slack blocks, from the region's stored moves
  const slackBlocks = (table.layout?.z ?? []).filter((b) => b.kind === 'stateSlack' || b.kind === 'outputSlack');
  const index = options.index && options.index.size === table.regions.length ? options.index : null;
  return points.map((p) => {
    let e: { region: number; u: number[] | null };
    if (index) {
      // the rule of evaluateTable (locatePoint with the table's index at tol.inside)
      if (p.length !== table.dims.ntheta) throw new Error(`θ has ${p.length} entries, the table expects ${table.dims.ntheta}`);
      const region = index.locate(p, tol.inside, false);
      e = { region, u: region < 0 ? null : applyAffine(table.regions[region].law, p) };
    } else e = evaluateTable(table, p);
    if (e.u && options.clamp) e.u = clampInputs(e.u, table.inputLimits);
    if (slackBlocks.length === 0) return { theta: p, region: e.region, u: e.u };
    const merged = e.region >= 0 && ((table.regions[e.region] as { mergedFrom?: number[] }).mergedFrom?.length ?? 1) > 1;
    const moves = e.region < 0 ? undefined : table.regions[e.region].moves;
    const slacks: Record<string, number> | null = !moves || merged ? null : {};
    if (slacks && moves) {
      for (const b of slackBlocks) b.names.forEach((nm, i) => (slacks[nm] = applyAffine({ F: [moves.F[b.offset + i]], g: [moves.g[b.offset + i]] }, p)[0]));
    }
    return { theta: p, region: e.region, u: e.u, slacks };
  });
}

/** Shortest decimal that reads back as the same double. */
const num = (v: number): string => String(v);

/**
 * CSV of evaluations (what `tessera evaluate` prints): header θ names, `region`, input names, one
 * line per point with every number in its shortest round-trip decimal; empty u cells where no
 * region holds θ. `options.clamp` as in `evaluatePoints`.
 */
export function evaluationCsv(table: TableFile, points: number[][], options: EvaluateOptions = {}): string {
  const header = [...table.thetaNames, 'region', ...table.inputNames].join(',');
  const rows = evaluatePoints(table, points, options).map((e) => {
    const u = e.u ? e.u.map(num) : table.inputNames.map(() => '');
    return [...e.theta.map(num), String(e.region), ...u].join(',');
  });
  return [header, ...rows].join('\n') + '\n';
}

/**
 * Points parsed into one array (`parsePointsFlat`): point k is values[k·nθ … k·nθ + nθ − 1], θ
 * order. For echoing the input: entry c of point k came from bytes [from[k·nθ + c], to[k·nθ + c])
 * of the input's UTF-8 encoding (the file's bytes) when that text is exactly what `String(value)`
 * prints (so it can be copied instead of formatted), else from = −1. The arrays are new and owned by
 * the caller.
 */
export interface FlatPoints {
  count: number;
  ntheta: number;
  values: Float64Array;
  from: Int32Array;
  to: Int32Array;
}

/**
 * The bytes [a, b) as a string, one character per byte (the plain grammar is ASCII): a slice of the
 * whole input decoded once, one byte to one character, on the first need (cells beyond 15 digits go
 * to `Number`; a slice of one long string costs less than a new string per cell).
 */
const wholeText = new WeakMap<Uint8Array, string>();
const singleByte = new TextDecoder('latin1');
function ascii(bytes: Uint8Array, a: number, b: number): string {
  let whole = wholeText.get(bytes);
  if (whole === undefined) {
    const native = (bytes as Uint8Array & { latin1Slice?: (a: number, b: number) => string }).latin1Slice;
    whole = native ? native.call(bytes, 0, bytes.length) : singleByte.decode(bytes);
    wholeText.set(bytes, whole);
  }
  return whole.slice(a, b);
}

const utf8 = new TextEncoder();
const utf8Decoder = new TextDecoder();

/** The input as UTF-8 bytes (a string is encoded, bytes are taken as they are). */
function asBytes(input: string | Uint8Array): Uint8Array {
  return typeof input === 'string' ? utf8.encode(input) : input;
}

/** 10⁰ … 10²², every one exact in double (Clinger's fast path). */
const POW10 = Array.from({ length: 23 }, (_, k) => Number(`1e${k}`));

const bits = new Float64Array(1);
const bitsU32 = new Uint32Array(bits.buffer);
/** The next double above the positive finite x (little-endian words, as everywhere in this file). */
function nextUp(x: number): number {
  bits[0] = x;
  if (bitsU32[0] === 0xffffffff) {
    bitsU32[0] = 0;
    bitsU32[1]++;
  } else bitsU32[0]++;
  return bits[0];
}
/** The next double below the positive finite x. */
function nextDown(x: number): number {
  bits[0] = x;
  if (bitsU32[0] === 0) {
    bitsU32[0] = 0xffffffff;
    bitsU32[1]--;
  } else bitsU32[0]--;
  return bits[0];
}

/**
 * The double nearest to M·10^e10, M = hi·10^k + lo (hi < 10¹⁵, lo < 10^k, k ≤ 4: 16 to 19
 * significant digits), |e10| ≤ 22, or NaN when the answer is not certain here (the caller then asks
 * `Number`). M is held exactly as s + t (error-free products and sums, Dekker 1971, Knuth's TwoSum);
 * q = fl(s·10^e10) or fl(s/10^−e10) is a candidate, and the exact distance D = M·10^e10 − q is
 * computed from error-free products to a relative error below 2⁻⁵⁰. Round to nearest keeps q when
 * |D| is below half the gap to the neighbouring double on D's side, and moves to that neighbour when
 * D lies beyond the half gap but below one and a half; within 2⁻³⁰ (relative) of a half gap, where
 * a tie or the error could decide, it gives NaN.
 */
/**
 * Set by `wideDecimal` for the double it returns: |M·10^e10 − value| and the step 10^e10 of M's last
 * digit, both in the same units (so their ratio is exact to 2⁻⁵⁰); also the signed distance
 * M·10^e10 − value and half the gaps from the value to the doubles above and below it, in those units.
 */
let wideDist = 0;
let wideStep = 0;
let wideSigned = 0;
let wideHalfUp = 0;
let wideHalfDown = 0;

function wideDecimal(hi: number, lo: number, k: number, e10: number): number {
  const scale = POW10[k];
  const p = hi * scale;
  const pe = twoProductLow(hi, scale, p);
  // M = p + pe + lo, all integers; s = fl(M), t = M − s exactly (TwoSum twice)
  let s = p + lo;
  let bv = s - p;
  let e1 = p - (s - bv) + (lo - bv);
  const t0 = pe + e1; // small integers (|pe|, |e1| ≤ 2¹⁰): exact
  const s2 = s + t0;
  bv = s2 - s;
  e1 = s - (s2 - bv) + (t0 - bv);
  s = s2;
  const t = e1;
  let q: number;
  let d: number; // D = M·10^e10 − q, in units where the half gaps below compare (times P for a division)
  let unit: number; // the factor of the gaps in d's units (P for a division, 1 for a product)
  if (e10 >= 0) {
    const P = POW10[e10];
    q = s * P;
    // D = (s·P − q) + t·P, both parts exact as double pairs
    const l = twoProductLow(s, P, q);
    const tp = t * P;
    const tl = twoProductLow(t, P, tp);
    d = l + tp + tl;
    unit = 1;
  } else {
    const P = POW10[-e10];
    q = s / P;
    // D·P = s + t − q·P = (s − h) − l + t, s − h exact (Sterbenz: h is within a few ulp of s)
    const h = q * P;
    const l = twoProductLow(q, P, h);
    d = s - h - l + t;
    unit = P;
  }
  if (!(q > 0 && q < Infinity)) return NaN;
  const up = nextUp(q);
  const down = nextDown(q);
  const margin = 2 ** -30;
  // the step of M's last digit in d's units: 10^e10 for a product, 10^e10·P = 1 for a division
  wideStep = e10 >= 0 ? POW10[e10] : 1;
  if (d >= 0) {
    const half = (up - q) * 0.5 * unit;
    if (d < half * (1 - margin)) {
      wideDist = d;
      wideSigned = d;
      wideHalfUp = half;
      wideHalfDown = (q - down) * 0.5 * unit;
      return q;
    }
    if (d > half * (1 + margin)) {
      // q' = up: D' = D − gap; keep it when below half of up's upper gap
      const d2 = d - (up - q) * unit;
      const half2 = (nextUp(up) - up) * 0.5 * unit;
      if (d2 < half2 * (1 - margin)) {
        wideDist = Math.abs(d2);
        wideSigned = d2;
        wideHalfUp = half2;
        wideHalfDown = half;
        return up;
      }
    }
    return NaN;
  }
  const half = (q - down) * 0.5 * unit;
  if (-d < half * (1 - margin)) {
    wideDist = -d;
    wideSigned = d;
    wideHalfUp = (up - q) * 0.5 * unit;
    wideHalfDown = half;
    return q;
  }
  if (-d > half * (1 + margin)) {
    const d2 = -d - (q - down) * unit;
    const half2 = (down - nextDown(down)) * 0.5 * unit;
    if (d2 < half2 * (1 - margin)) {
      wideDist = Math.abs(d2);
      wideSigned = -d2;
      wideHalfUp = half;
      wideHalfDown = half2;
      return down;
    }
  }
  return NaN;
}

/**
 * Whether the decimal at signed distance `d` from the value `wideDecimal` last returned (d = decimal −
 * value, in its units) reads back as that value: 1 when |d| is below half the gap on its side by a
 * margin of 2⁻³⁰ (relative), 0 when above it by that margin, −1 when that close to the half gap
 * (a tie, or the rounding of d could decide: the caller then reads the decimal in full).
 */
function readsBack(d: number): number {
  const h = d >= 0 ? wideHalfUp : wideHalfDown;
  const a = Math.abs(d);
  const margin = 2 ** -30;
  return a < h * (1 - margin) ? 1 : a > h * (1 + margin) ? 0 : -1;
}

/** Where the last `plainNumber` stopped (the byte after the cell's grammar) and whether the cell is canonical. */
let scanEnd = 0;
let scanCanon = 0;

/** The end of the cell starting at a: the first comma, CR or LF at or after a, else L. */
function cellEnd(text: Uint8Array, a: number, L: number): number {
  let i = a;
  while (i < L) {
    const c = text[i];
    if (c === 44 || c === 10 || c === 13) break;
    i++;
  }
  return i;
}

/**
 * One cell of the plain grammar [+-]digits[.digits][(e|E)[+-]digits] read from text[a …] (bytes, at
 * most to L): its value, with `scanEnd` set to the first byte after the grammar (the caller checks
 * that a comma or the line's end follows; anything else makes the line take the general path), or
 * NaN when no number of that grammar starts at a. Up to 15 significant digits and a decimal exponent
 * within ±22 give the correctly rounded double by one exact multiplication or division (Clinger
 * 1990, "How to read floating point numbers accurately"); anything else goes to `Number` on the
 * cell's text, which is what the general path calls; 16 to 19 digits by `wideDecimal`. `scanCanon`
 * is set to 1 when the text is exactly what `String` prints for the value (no sign '+', no exponent,
 * no redundant zero, in V8's fixed-notation range 10⁻⁶ ≤ |v| < 10²¹, not −0; at most 15 significant
 * digits, or 16–17 that are the closest of their length with no shorter decimal reading back as v).
 */
function plainNumber(text: Uint8Array, a: number, L: number): number {
  // the common case first: [-]digits[.digits], at most 15 digits in all (leading zeros counted), no
  // exponent; the value M/10^f (M < 10¹⁵, exact) by one correctly rounded division (Clinger's fast
  // path), as below; anything else is read by the full scan
  let i = a;
  let c = i < L ? text[i] : 0;
  const neg = c === 45;
  if (neg) c = ++i < L ? text[i] : 0;
  const st = i;
  let m = 0;
  while (c >= 48 && c <= 57) {
    m = m * 10 + (c - 48);
    c = ++i < L ? text[i] : 0;
  }
  const intDigits = i - st;
  let fracDigits = 0;
  const dot = c === 46;
  if (dot && intDigits <= 15) {
    c = ++i < L ? text[i] : 0;
    const fs = i;
    // at most 15 digits in all here: a 16th stops the loop (and the cell goes to the full scan)
    const lim = fs + 15 - intDigits;
    while (c >= 48 && c <= 57 && i < lim) {
      m = m * 10 + (c - 48);
      c = ++i < L ? text[i] : 0;
    }
    fracDigits = i - fs;
  }
  const total = intDigits + fracDigits;
  if (total === 0 || total > 15 || (c >= 48 && c <= 57) || c === 101 || c === 69 || (c === 43 && i === a)) {
    // a 16th digit in the fraction (the spelling String prints for most doubles): go on from here
    if (dot && intDigits > 0 && total === 15 && c >= 48 && c <= 57) return plainWide(text, a, L, i, m, neg, st, intDigits, fracDigits);
    return plainNumberFull(text, a, L);
  }
  scanEnd = i;
  let v = fracDigits === 0 ? m : m / POW10[fracDigits];
  if (neg) v = -v;
  // String's text: no redundant zero (a leading one before other integer digits, a trailing one
  // after the point, a point with no digit after it), not −0, fixed notation (≥ 10⁻⁶: at most five
  // zeros after "0.")
  scanCanon =
    intDigits > 0 &&
    (intDigits === 1 || text[st] !== 48) &&
    (!dot || (fracDigits > 0 && text[i - 1] !== 48)) &&
    !(neg && v === 0) &&
    !(intDigits === 1 && text[st] === 48 && fracDigits >= 7 && m < POW10[fracDigits - 6])
      ? 1
      : 0;
  return v;
}

/**
 * `plainNumber` for a cell [-]digits.digits whose first 15 digit characters (leading zeros counted,
 * value m) are read and whose 16th, at text[i], is in the fraction: the scan goes on from there
 * instead of starting again. Up to 4 more digits (M = m·10^k + low, the same integer M the full
 * scan forms) and 16 to 19 significant digits are read by `wideDecimal`, the same call with the same
 * M and exponent as the full scan's, so the same double. String's spelling (16–17 significant
 * digits) as in the full scan: the closest decimal of its length to the value, and neither decimal of
 * one digit fewer around it, (M − r)·10^e and (M − r + 10)·10^e with r = M mod 10, reads back as the
 * value: their distances to it are M's distance minus r steps and plus 10 − r steps (`readsBack`), no
 * new reading. Anything else (an exponent, more digits, fewer than 16 significant ones, a distance
 * within the margin of a half gap) goes to `plainNumberFull`.
 */
function plainWide(text: Uint8Array, a: number, L: number, i: number, m: number, neg: boolean, st: number, intDigits: number, fracDigits: number): number {
  let low = 0;
  let k = 0;
  let c = text[i];
  while (c >= 48 && c <= 57) {
    if (k === 4) return plainNumberFull(text, a, L);
    low = low * 10 + (c - 48);
    k++;
    c = ++i < L ? text[i] : 0;
  }
  if (c === 101 || c === 69) return plainNumberFull(text, a, L);
  // leading zeros among the digit characters (the point skipped)
  let lz = 0;
  for (let j = st; j < i; j++) {
    const d = text[j];
    if (d === 46) continue;
    if (d !== 48) break;
    lz++;
  }
  const sig = 15 + k - lz;
  if (sig < 16) return plainNumberFull(text, a, L);
  const w = wideDecimal(m, low, k, -(fracDigits + k));
  if (w !== w) return plainNumberFull(text, a, L);
  scanEnd = i;
  scanCanon = 0;
  const zeroInt = intDigits === 1 && text[st] === 48;
  if (sig <= 17 && wideDist < 0.5 * wideStep * (1 - 2 ** -30) && (intDigits === 1 || text[st] !== 48) && text[i - 1] !== 48 && !(zeroInt && lz - 1 > 5)) {
    const r = low % 10;
    const below = readsBack(wideSigned - r * wideStep);
    const above = readsBack(wideSigned + (10 - r) * wideStep);
    if (below < 0 || above < 0) return plainNumberFull(text, a, L);
    if (below === 0 && above === 0) scanCanon = 1;
  }
  return neg ? -w : w;
}

/** `plainNumber` for every cell of the plain grammar (signs, exponents, 16 digits and more). */
function plainNumberFull(text: Uint8Array, a: number, L: number): number {
  scanCanon = 0;
  let i = a;
  let neg = false;
  let c = text[i];
  let plus = false;
  if (c === 45 || c === 43) {
    neg = c === 45;
    plus = c === 43;
    i++;
  }
  let mant = 0; // the first 15 significant digits as an integer (exact)
  let low = 0; // the digits after those (exact up to 19 digits in all; beyond, Number reads the cell)
  let digits = 0; // significant digits (from the first non-zero one)
  let intDigits = 0;
  let intLeadZero = false;
  for (; i < L; i++) {
    c = text[i];
    if (c < 48 || c > 57) break;
    if (intDigits === 0 && c === 48) intLeadZero = true;
    intDigits++;
    if (digits > 0 || c !== 48) {
      if (++digits <= 15) mant = mant * 10 + (c - 48);
      else low = low * 10 + (c - 48);
    }
  }
  let fracDigits = 0;
  let fracLeadZeros = 0;
  let lastFrac = -1;
  let dot = false;
  if (i < L && c === 46) {
    dot = true;
    for (i++; i < L; i++) {
      c = text[i];
      if (c < 48 || c > 57) break;
      fracDigits++;
      lastFrac = c;
      if (digits > 0 || c !== 48) {
        if (++digits <= 15) mant = mant * 10 + (c - 48);
        else low = low * 10 + (c - 48);
      } else fracLeadZeros++;
    }
  }
  scanEnd = i;
  if (intDigits + fracDigits === 0) return NaN;
  let exp = 0;
  let hasExp = false;
  if (i < L && (c === 101 || c === 69)) {
    hasExp = true;
    i++;
    let eneg = false;
    c = text[i];
    if (i < L && (c === 45 || c === 43)) {
      eneg = c === 45;
      i++;
    }
    let ed = 0;
    for (; i < L; i++) {
      c = text[i];
      if (c < 48 || c > 57) break;
      if (++ed > 5) {
        scanEnd = cellEnd(text, a, L);
        return Number(ascii(text, a, scanEnd));
      }
      exp = exp * 10 + (c - 48);
    }
    scanEnd = i;
    if (ed === 0) return NaN;
    if (eneg) exp = -exp;
  }
  const e10 = exp - fracDigits;
  if (digits > 15) {
    // 16 to 19 digits: M = mant·10^(digits − 15) + low exactly, value M·10^e10
    const w = digits <= 19 && e10 >= -22 && e10 <= 22 ? wideDecimal(mant, low, digits - 15, e10) : NaN;
    if (w !== w) return Number(ascii(text, a, i));
    // String prints 16 or 17 digits when no shorter decimal reads back as the value, and then the
    // closest of that length: the cell is that text when M is within less than half a step of its
    // last digit from the value, and neither decimal of one digit fewer around it reads back as the value
    if (digits <= 17 && wideDist < 0.5 * wideStep * (1 - 2 ** -30) && !plus && !hasExp && intDigits > 0 && (!intLeadZero || intDigits === 1) && (!dot || (fracDigits > 0 && lastFrac !== 48)) && !(intDigits === 1 && intLeadZero && dot && fracLeadZeros > 5)) {
      let shorter: number;
      let next: number;
      const e1 = e10 + 1;
      if (digits === 16) {
        // ⌊M/10⌋ = mant and mant + 1, 15 and at most 16 digits (10¹⁵): exact, Clinger's fast path
        const P = e1 >= 0 ? POW10[e1] : POW10[-e1];
        shorter = e1 > 22 || e1 < -22 ? NaN : e1 >= 0 ? mant * P : mant / P;
        next = e1 > 22 || e1 < -22 ? NaN : e1 >= 0 ? (mant + 1) * P : (mant + 1) / P;
      } else {
        // the 16-digit decimals around M, (M − r)·10^e10 and (M − r + 10)·10^e10 (r = M mod 10), lie
        // at r and 10 − r steps below and above M: their distances to w follow from M's (to ~2⁻⁴⁸ of
        // a half gap, which is ≥ 0.55 step at 17 digits); only within the margin of a half gap are
        // they read in full, as before
        const r = low % 10;
        const below = readsBack(wideSigned - r * wideStep);
        const above = readsBack(wideSigned + (10 - r) * wideStep);
        if (below >= 0 && above >= 0) {
          if (below === 0 && above === 0) scanCanon = 1;
          return neg ? -w : w;
        }
        const d = Math.floor(low / 10);
        shorter = e1 > 22 ? NaN : wideDecimal(mant, d, 1, e1);
        next = e1 > 22 ? NaN : wideDecimal(mant, d + 1, 1, e1);
      }
      if (shorter === shorter && next === next && shorter !== w && next !== w) scanCanon = 1;
    }
    return neg ? -w : w;
  }
  let v: number;
  if (mant === 0) v = 0;
  else if (e10 >= 0 && e10 <= 22) v = mant * POW10[e10];
  else if (e10 < 0 && e10 >= -22) v = mant / POW10[-e10];
  else return Number(ascii(text, a, i));
  if (neg) v = -v;
  const intOk = intDigits > 0 && (!intLeadZero || intDigits === 1);
  const fracOk = !dot || (fracDigits > 0 && lastFrac !== 48);
  const zeroInt = intDigits === 1 && intLeadZero;
  if (!plus && !hasExp && intOk && fracOk && !(neg && v === 0) && !(zeroInt && dot && fracLeadZeros > 5)) scanCanon = 1;
  return v;
}

/** Room for `cap` points of `n` cells (values, and the byte range of each cell), holding `old`'s first entries when given. */
function cellArrays(cap: number, n: number, old?: { values: Float64Array; from: Int32Array; to: Int32Array }): { values: Float64Array; from: Int32Array; to: Int32Array } {
  const c = { values: new Float64Array(cap * n), from: new Int32Array(cap * n), to: new Int32Array(cap * n) };
  if (old) {
    c.values.set(old.values);
    c.from.set(old.from);
    c.to.set(old.to);
  }
  return c;
}

/**
 * `parsePointsCsv` into one typed array (same rules, same errors, same values bit for bit): lines
 * of plain numbers are read by a scan over the bytes, any other line is decoded and takes the
 * general path. Give the file's bytes (a string is encoded to UTF-8 first); `from`/`to` are offsets
 * into those bytes.
 */
export function parsePointsFlat(input: string | Uint8Array, path: string, thetaNames: string[]): FlatPoints {
  const text = asBytes(input);
  const n = thetaNames.length;
  // one point per line at most: the arrays are sized once (a count of the newlines, a native scan)
  let lines = 1;
  for (let i = text.indexOf(10); i >= 0; i = text.indexOf(10, i + 1)) lines++;
  let cap = lines;
  let { values, from, to } = cellArrays(cap, n);
  let count = 0;
  let first = true;
  let order: number[] | null = null;
  const cellA = new Int32Array(n);
  const cellB = new Int32Array(n);
  const cellV = new Float64Array(n);
  const cellC = new Uint8Array(n);
  const L = text.length;
  let pos = 0;
  let lineNo = 0;
  const grow = (): void => {
    cap *= 2;
    ({ values, from, to } = cellArrays(cap, n, { values, from, to }));
  };
  const push = (vals: ArrayLike<number>, a: Int32Array | null, b: Int32Array | null, ok: Uint8Array | null): void => {
    if (count === cap) grow();
    const o = count * n;
    for (let j = 0; j < n; j++) {
      const k = order ? order[j] : j;
      values[o + j] = vals[k];
      from[o + j] = a && ok && ok[k] ? a[k] : -1;
      to[o + j] = b ? b[k] : -1;
    }
    count++;
  };
  while (pos <= L) {
    lineNo++;
    // the plain path, one pass over the line's bytes: exactly nθ cells, each a number of the plain
    // grammar followed by a comma or the line's end (LF, CR LF, or a CR or nothing at the end of
    // the input); anything else (a header, blanks, comments, other spellings) takes the general path
    let end = -1;
    let plain = !first;
    let cells = 0;
    let a = pos;
    while (plain) {
      const v = plainNumber(text, a, L);
      if (!Number.isFinite(v) || cells === n) {
        plain = false;
        break;
      }
      const e = scanEnd;
      cellA[cells] = a;
      cellB[cells] = e;
      cellV[cells] = v;
      cellC[cells] = scanCanon;
      cells++;
      const c = e < L ? text[e] : 10;
      if (c === 44) a = e + 1;
      else if (c === 10) {
        end = e;
        break;
      } else if (c === 13 && (e + 1 === L || text[e + 1] === 10)) {
        end = e + 1 === L ? L : e + 1;
        break;
      } else plain = false;
    }
    if (plain && cells === n) {
      if (count === cap) grow();
      const o = count * n;
      for (let j = 0; j < n; j++) {
        const k = order ? order[j] : j;
        values[o + j] = cellV[k];
        from[o + j] = cellC[k] ? cellA[k] : -1;
        to[o + j] = cellB[k];
      }
      count++;
      pos = end + 1;
      continue;
    }
    end = text.indexOf(10, pos);
    if (end < 0) end = L;
    {
      // the general path, exactly parsePointsCsv's rules for this line
      const line = utf8Decoder.decode(text.subarray(pos, end)).replace(/\r$/, '').trim();
      if (!(line === '' || line.startsWith('#'))) {
        const cs = line.split(',').map((x) => x.trim());
        const nums = cs.map(Number);
        let header = false;
        if (first) {
          first = false;
          if (cs.every((x, k) => x === '' || Number.isNaN(nums[k]))) {
            order = headerColumns(path, lineNo, cs, thetaNames);
            header = true;
          }
        }
        if (!header) {
          if (cs.length !== n) throw new InputError(path, `line ${lineNo}`, `expected ${n} values (θ has ${n} entries), got ${cs.length}`);
          nums.forEach((v, k) => {
            if (cs[k] === '' || !Number.isFinite(v)) throw new InputError(path, `line ${lineNo}, column ${k + 1}`, `"${cs[k]}" is not a finite number`);
          });
          push(nums, null, null, null);
        }
      }
    }
    pos = end + 1;
  }
  return { count, ntheta: n, values: values.subarray(0, count * n), from: from.subarray(0, count * n), to: to.subarray(0, count * n) };
}

/** Points parsed from a range of lines of the points file (`parsePointsRange`): file column order. */
export interface RangePoints {
  count: number;
  /** point k's cells at values[k·n …], in the file's column order (not yet in θ order) */
  values: Float64Array;
  /** bytes [from, to) of each cell in the whole input when it is what `String` prints, else from = −1 (as `FlatPoints`) */
  from: Int32Array;
  to: Int32Array;
}

/**
 * The data lines in bytes [start, end) of the points file `text` (start at a line's first byte, end
 * after an LF or at the end of the input), each of `n` cells: the values `parsePointsFlat` gives for
 * those lines when none of them is the file's first non-blank line (the header candidate), in the
 * file's column order, bit for bit (the same plain scan, `Number` for the rest). Null when some line
 * is neither blank, a comment nor `n` finite numbers: the caller then reads the whole file with
 * `parsePointsFlat`, which reports the first such line. The arrays are new (or views of new arrays).
 */
export function parsePointsRange(text: Uint8Array, start: number, end: number, n: number): RangePoints | null {
  // sized from the first lines' length, grown by doubling
  let probe = start;
  let seen = 0;
  while (seen < 64 && probe < end) {
    const lf = text.indexOf(10, probe);
    if (lf < 0 || lf >= end) break;
    probe = lf + 1;
    seen++;
  }
  let cap = Math.max(16, seen > 0 && probe > start ? Math.ceil(((end - start) / (probe - start)) * seen * 1.05) + 16 : 16);
  let { values, from, to } = cellArrays(cap, n);
  const grow = (): void => {
    cap *= 2;
    ({ values, from, to } = cellArrays(cap, n, { values, from, to }));
  };
  const L = end;
  const fileEnd = text.length;
  let count = 0;
  let pos = start;
  while (pos < L) {
    if (count === cap) grow();
    const o = count * n;
    // the plain path (parsePointsFlat's): exactly n cells of the plain grammar, each followed by a
    // comma or the line's end; written in place, kept only when the whole line passes
    let next = -1;
    let cells = 0;
    let a = pos;
    for (;;) {
      const v = plainNumber(text, a, L);
      if (!Number.isFinite(v) || cells === n) break;
      const e = scanEnd;
      values[o + cells] = v;
      from[o + cells] = scanCanon ? a : -1;
      to[o + cells] = e;
      cells++;
      const c = e < L ? text[e] : 10;
      if (c === 44) a = e + 1;
      else if (c === 10) {
        if (cells === n) next = e + 1;
        break;
      } else {
        if (c === 13 && (e + 1 === fileEnd || text[e + 1] === 10) && cells === n) next = e + 2;
        break;
      }
    }
    if (next >= 0) {
      count++;
      pos = next;
      continue;
    }
    // the general path: parsePointsFlat's rules for a line after the first
    let lf = text.indexOf(10, pos);
    if (lf < 0 || lf >= L) lf = L;
    const line = utf8Decoder.decode(text.subarray(pos, lf)).replace(/\r$/, '').trim();
    pos = lf + 1;
    if (line === '' || line.startsWith('#')) continue;
    const cs = line.split(',').map((x) => x.trim());
    if (cs.length !== n) return null;
    for (let j = 0; j < n; j++) {
      const v = Number(cs[j]);
      if (cs[j] === '' || !Number.isFinite(v)) return null;
      values[o + j] = v;
      from[o + j] = -1;
      to[o + j] = -1;
    }
    count++;
  }
  return { count, values: values.subarray(0, count * n), from: from.subarray(0, count * n), to: to.subarray(0, count * n) };
}

/**
 * Put each point's cells of `p` (file column order) into θ order in place: entry j of a point takes
 * the cell of column order[j] (`headerColumns`), as `parsePointsFlat` stores them.
 */
export function orderRangePoints(p: RangePoints, n: number, order: number[] | null): void {
  if (!order || order.every((k, j) => k === j)) return;
  const v = new Float64Array(n);
  const f = new Int32Array(n);
  const t = new Int32Array(n);
  for (let k = 0; k < p.count; k++) {
    const o = k * n;
    for (let j = 0; j < n; j++) {
      v[j] = p.values[o + j];
      f[j] = p.from[o + j];
      t[j] = p.to[o + j];
    }
    for (let j = 0; j < n; j++) {
      p.values[o + j] = v[order[j]];
      p.from[o + j] = f[order[j]];
      p.to[o + j] = t[order[j]];
    }
  }
}

/**
 * Where the data of a points file begins, found without the table: the file's first line that is
 * neither blank nor a comment is a header when none of its cells reads as a number (`parsePointsCsv`'s
 * rule). Returns its 1-based line number, its trimmed cells, whether it is a header, and the byte
 * where the data lines start (after it when it is a header, at it otherwise); null when the file has
 * no such line.
 */
export function pointsFileHead(text: Uint8Array): { line: number; cells: string[]; header: boolean; dataStart: number } | null {
  let pos = 0;
  let lineNo = 0;
  const L = text.length;
  while (pos <= L) {
    lineNo++;
    let lf = text.indexOf(10, pos);
    if (lf < 0) lf = L;
    const line = utf8Decoder.decode(text.subarray(pos, lf)).replace(/\r$/, '').trim();
    if (!(line === '' || line.startsWith('#'))) {
      const cells = line.split(',').map((x) => x.trim());
      const header = cells.every((x) => x === '' || Number.isNaN(Number(x)));
      return { line: lineNo, cells, header, dataStart: header ? Math.min(lf + 1, L) : pos };
    }
    pos = lf + 1;
  }
  return null;
}

/** `headerColumns` for a caller outside this module (the threaded CSV path). */
export function pointsHeaderColumns(path: string, line: number, cells: string[], names: string[]): number[] {
  return headerColumns(path, line, cells, names);
}

/**
 * The laws of every region packed for evaluation: region r's u(0) = F_r θ + g_r with F_r at
 * F[r·nu·nθ …] (row-major) and g_r at g[r·nu …]. Cached per regions array; `applyAffine`'s order of
 * operations (g first, then + F_ij θ_j in j order), so the values are the same bits. `constant[r·nu
 * + i]` is 1 when row i of F_r is all zeros (a saturated input): then u_i = g_ri at every θ (g + 0·θ_j
 * is g, or ±0 when g is ±0, which prints as "0" either way), so the multiply is skipped and the text
 * of the value is made once per region.
 */
const lawCache = new WeakMap<object, { F: Float64Array; g: Float64Array; constant: Uint8Array }>();
function packedLaws(table: { regions: readonly { law: AffineMap }[]; dims: TableFile['dims'] }): { F: Float64Array; g: Float64Array; constant: Uint8Array } {
  const hit = lawCache.get(table.regions);
  if (hit && hit.g.length === table.regions.length * table.dims.nu) return hit;
  const n = table.dims.ntheta;
  const nu = table.dims.nu;
  const R = table.regions.length;
  const F = new Float64Array(R * nu * n);
  const g = new Float64Array(R * nu);
  const constant = new Uint8Array(R * nu);
  for (let r = 0; r < R; r++) {
    const law = table.regions[r].law;
    for (let i = 0; i < nu; i++) {
      g[r * nu + i] = law.g[i];
      let zero = 1;
      for (let j = 0; j < n; j++) {
        const f = law.F[i][j];
        F[(r * nu + i) * n + j] = f;
        if (f !== 0) zero = 0;
      }
      constant[r * nu + i] = zero;
    }
  }
  const out = { F, g, constant };
  lawCache.set(table.regions, out);
  return out;
}

/** Seconds spent by `evaluateCsvChunks` / `evaluateCsvBytes` in their stages (added to as they run). */
export interface EvaluateTimes {
  /** building the k-d tree and packing the laws (on first use per table) */
  index: number;
  /** locating the points */
  locate: number;
  /** evaluating the laws (and the clamp) at the located points */
  law: number;
  /** formatting the CSV bytes */
  format: number;
  /** when present, the process CPU seconds (user + system, `process.cpuUsage`-like `cpuNow`) of the same stages are added here */
  cpu?: { index: number; locate: number; law: number; format: number };
  /** the clock of `cpu`: CPU seconds so far (the caller's, e.g. from `process.cpuUsage()`; the core reads no process) */
  cpuNow?: () => number;
}

/** Writes the ASCII string s into out at `at`; returns the end. */
function put(out: Uint8Array, at: number, s: string): number {
  for (let i = 0; i < s.length; i++) out[at + i] = s.charCodeAt(i);
  return at + s.length;
}

/** Writes the decimal digits of the integer r ≥ −1 into out at `at`; returns the end. */
function putInt(out: Uint8Array, at: number, r: number): number {
  if (r < 0) {
    out[at] = 45;
    out[at + 1] = 49;
    return at + 2;
  }
  let d = 1;
  while (d * 10 <= r) d *= 10;
  for (; d >= 1; d = (d / 10) | 0) {
    const q = (r / d) | 0;
    out[at++] = 48 + q;
    r -= q * d;
  }
  return at;
}

/**
 * The shortest round-trip text of doubles (`String(v)`), remembered for the last value seen in each
 * of 4096 slots (a hash of the bits): inputs held at a limit, clamped u and grid points repeat the
 * same values constantly, and `String` is the larger part of the formatting cost.
 */
export class NumberText {
  private readonly keys = new Float64Array(4096).fill(NaN);
  private readonly texts: string[] = new Array<string>(4096).fill('');
  private readonly f64 = new Float64Array(1);
  private readonly u32 = new Uint32Array(this.f64.buffer);
  text(v: number): string {
    this.f64[0] = v;
    const h = (Math.imul(this.u32[0] ^ this.u32[1], 0x9e3779b1) >>> 20) & 4095;
    // NaN never equals a key; ±0 share a slot's text ("0")
    if (this.keys[h] === v) return this.texts[h];
    const t = String(v);
    this.keys[h] = v;
    this.texts[h] = t;
    return t;
  }
}

/**
 * `evaluationCsv` for points given as parsed CSV (`parsePointsFlat`, with the same `input`), plus
 * `extra` points (θ order) after them, as UTF-8 byte chunks of about `chunkPoints` lines each, the
 * header in the first. Byte for byte the text `evaluationCsv` gives for the same points:
 * - θ cells already in their shortest round-trip form are copied from `input` (a whole line at
 *   once when its cells are all such and in θ order), the others formatted by `String`;
 * - points are located by the table's shared k-d tree (`sharedTableLocator`, the rule of
 *   `evaluateTable`) and the laws evaluated from packed arrays, without an array per point;
 * - a region whose law is constant in every input (saturated) has its whole `,region,u…` tail
 *   formatted once; other values go through a small cache of `String` results.
 * Each chunk is a new array the caller may keep. `times`, when given, receives the seconds spent per
 * stage (`performance.now()`).
 */
export function* evaluateCsvBytes(
  table: EvaluatedTable,
  input: string | Uint8Array,
  points: FlatPoints,
  extra: number[][] = [],
  options: EvaluateOptions & { chunkPoints?: number; times?: EvaluateTimes } = {},
): Generator<Uint8Array> {
  const n = table.dims.ntheta;
  if (points.ntheta !== n) throw new Error(`points have ${points.ntheta} entries, the table expects ${n}`);
  const times = options.times ?? { index: 0, locate: 0, law: 0, format: 0 };
  const context = csvContext(table, options, times, points.count + extra.length);
  const all = csvPoints(points, extra);
  const text = points.count > 0 ? asBytes(input) : new Uint8Array(0);
  yield* csvLines(context, { text, values: all, fileCount: points.count, from: points.from, to: points.to }, 0, all.length / Math.max(n, 1), true, options.chunkPoints, times, isFullTable(table) ? table.regions : null);
}

/**
 * What `csvLines` needs of a table, made once: the k-d tree (null below 32 regions: then the lines
 * are located by a scan of the regions), the packed laws (`packedLaws`), the clamp, the names. Plain
 * data and typed arrays (the tree as `BoxIndex.state()`), so a worker thread can be sent it.
 */
export interface CsvContext {
  ntheta: number;
  nu: number;
  regions: number;
  index: BoxIndex | null;
  F: Float64Array;
  g: Float64Array;
  constant: Uint8Array;
  clamp: boolean;
  /** the clamp bounds per input (±∞ for a missing one) */
  lower: Float64Array;
  upper: Float64Array;
  /** the CSV header line */
  header: string;
}

/** The points of a CSV path to locate: θ at values[k·nθ …], cells of the first `fileCount` copied from `text` (`FlatPoints.from`/`to`). */
export interface CsvPoints {
  text: Uint8Array;
  values: Float64Array;
  fileCount: number;
  from: Int32Array;
  to: Int32Array;
}

/**
 * Fewer points than this are located by a scan of the regions (`locateScan`, the same rule) unless
 * an index is given: building the k-d tree costs about as much as scanning a few
 * thousand points (6 000-region 4-D table: 1.5 s CPU cold against ~0.25 ms per scanned point), so
 * `evaluate --at` and small files no longer pay for it (one `--at` point: 2.3 → 0.5 s CPU).
 */
export const SCAN_BELOW_POINTS = 1000;

/**
 * The k-d tree and packed laws of `table` for `csvLines` (the tree built on first use per table; the
 * time goes to `times.index`). With `points` < SCAN_BELOW_POINTS and no index given, there is no tree: the lines are located by a scan.
 */
export function csvContext(table: EvaluatedTable, options: EvaluateOptions = {}, times?: EvaluateTimes, points = Infinity): CsvContext {
  const now = (): number => performance.now() / 1000;
  const cpuNow = times?.cpuNow ?? ((): number => 0);
  const c0 = cpuNow();
  const t0 = now();
  const given = options.index && options.index.size === table.regions.length ? options.index : null;
  if (!given && !isFullTable(table)) throw new Error('a table read for its laws only is located through its index');
  const index = given ?? (points < SCAN_BELOW_POINTS || !isFullTable(table) ? null : sharedTableLocator(table.regions, table.box));
  const { F, g, constant } = packedLaws(table);
  if (times) {
    times.index += now() - t0;
    if (times.cpu) times.cpu.index += cpuNow() - c0;
  }
  const nu = table.dims.nu;
  // the clamp of clampInputs, per input: a missing bound is ±∞ (never compares true), NaN stays NaN
  const lower = new Float64Array(nu).fill(-Infinity);
  const upper = new Float64Array(nu).fill(Infinity);
  for (let i = 0; i < nu; i++) {
    const a = table.inputLimits.lower[i];
    const b = table.inputLimits.upper[i];
    if (a !== null && a !== undefined) lower[i] = a;
    if (b !== null && b !== undefined) upper[i] = b;
  }
  return {
    ntheta: table.dims.ntheta,
    nu,
    regions: table.regions.length,
    index,
    F,
    g,
    constant,
    clamp: !!options.clamp,
    lower,
    upper,
    header: [...table.thetaNames, 'region', ...table.inputNames].join(',') + '\n',
  };
}

/** The parsed points as they are, followed by `extra` (θ order): a copy only when extra points follow. */
export function csvPoints(points: FlatPoints, extra: number[][]): Float64Array {
  const n = points.ntheta;
  let all = points.values.subarray(0, points.count * n);
  if (extra.length) {
    all = new Float64Array((points.count + extra.length) * n);
    all.set(points.values.subarray(0, points.count * n));
    for (let k = 0; k < extra.length; k++) for (let j = 0; j < n; j++) all[(points.count + k) * n + j] = extra[k][j];
  }
  return all;
}

/**
 * The per-chunk work of `csvLines` as plain methods (a loop inside a generator is compiled less well
 * than one in an ordinary function): locate, evaluate the laws, format into a scratch array.
 */
class CsvChunkWriter {
  private readonly n: number;
  private readonly nu: number;
  private readonly allConstant: Uint8Array;
  private readonly prefixes: (string | undefined)[];
  private readonly tails: (string | undefined)[];
  private readonly noRegion: string;
  private readonly numbers = new NumberText();
  readonly region: Int32Array;
  private readonly u: Float64Array;
  private readonly th: Float64Array;
  /** bytes per line at most: a double prints in ≤ 25 characters, a copied cell is such a text */
  readonly lineMax: number;
  scratch = new Uint8Array(0);
  /** the input's bytes and the scratch array as DataViews: θ bytes are copied four at a time */
  private readonly textView: DataView<ArrayBufferLike>;
  private outView: DataView<ArrayBufferLike> = new DataView(new ArrayBuffer(0));
  private outOf: Uint8Array | null = null;

  constructor(
    private readonly ctx: CsvContext,
    private readonly pts: CsvPoints,
    chunk: number,
    private readonly regions: CriticalRegion[] | null,
  ) {
    const n = (this.n = ctx.ntheta);
    const nu = (this.nu = ctx.nu);
    const R = ctx.regions;
    // per region, made on first use: ",r" and, when every input is constant there, ",r,u…\n"
    this.allConstant = new Uint8Array(R);
    for (let r = 0; r < R; r++) {
      let c = 1;
      for (let i = 0; i < nu; i++) if (!ctx.constant[r * nu + i]) c = 0;
      this.allConstant[r] = c;
    }
    this.prefixes = new Array<string | undefined>(R);
    this.tails = new Array<string | undefined>(R);
    this.noRegion = ',-1' + ','.repeat(nu) + '\n';
    this.region = new Int32Array(chunk);
    this.u = new Float64Array(chunk * nu);
    this.th = new Float64Array(n);
    this.lineMax = 26 * (n + nu) + 16;
    this.textView = new DataView(pts.text.buffer, pts.text.byteOffset, pts.text.byteLength);
  }

  /**
   * Copy the input's bytes [i, e) into out at `at`; returns the end. Four bytes at a time through
   * DataViews (the same byte order on both sides, so the bytes are the same on any machine), the
   * rest one at a time: the θ text of a line is ~40 bytes at 7 digits (format stage 0.21–0.30 →
   * 0.16–0.22 s CPU per 10⁶ 4-D lines; 17 digits 0.26–0.41 → 0.18–0.27; alternated in one process).
   */
  private copy(out: Uint8Array, at: number, i: number, e: number): number {
    if (this.outOf !== out) {
      this.outView = new DataView(out.buffer, out.byteOffset, out.byteLength);
      this.outOf = out;
    }
    const src = this.textView;
    const dst = this.outView;
    for (; i + 4 <= e; i += 4, at += 4) dst.setUint32(at, src.getUint32(i, true), true);
    const text = this.pts.text;
    for (; i < e; i++) out[at++] = text[i];
    return at;
  }

  /** a constant row gives g only at a finite θ (0·∞ is NaN): points with another entry take the product */
  private finite(k: number): boolean {
    const all = this.pts.values;
    const n = this.n;
    for (let j = 0; j < n; j++) if (!Number.isFinite(all[k * n + j])) return false;
    return true;
  }

  private lawAt(r: number, i: number, k: number, skipConstant: boolean): number {
    const { F, g, constant, clamp, lower, upper } = this.ctx;
    const all = this.pts.values;
    const n = this.n;
    const nu = this.nu;
    let s = g[r * nu + i];
    if (!(skipConstant && constant[r * nu + i])) {
      const o = (r * nu + i) * n;
      for (let j = 0; j < n; j++) s += F[o + j] * all[k * n + j];
    }
    if (clamp) {
      if (s < lower[i]) s = lower[i];
      if (s > upper[i]) s = upper[i];
    }
    return s;
  }

  private prefixOf(r: number): string {
    return (this.prefixes[r] ??= `,${r}`);
  }

  private constantTail(r: number): string {
    let t = this.tails[r];
    if (t === undefined) {
      t = this.prefixOf(r);
      for (let i = 0; i < this.nu; i++) t += `,${String(this.lawAt(r, i, 0, true))}`;
      this.tails[r] = t += '\n';
    }
    return t;
  }

  /** regions of points a … b − 1 into region[0 …] */
  locate(a: number, b: number): void {
    const index = this.ctx.index;
    const all = this.pts.values;
    const n = this.n;
    const region = this.region;
    if (index) {
      for (let k = a; k < b; k++) region[k - a] = index.locateAt(all, k * n, tol.inside, false);
      return;
    }
    const th = this.th;
    for (let k = a; k < b; k++) {
      for (let j = 0; j < n; j++) th[j] = all[k * n + j];
      region[k - a] = locateScan(this.regions!, th, tol.inside).region;
    }
  }

  /** u of points a … b − 1 (located) into u[0 …], but for regions whose law is constant */
  law(a: number, b: number): void {
    const nu = this.nu;
    const region = this.region;
    const u = this.u;
    const allConstant = this.allConstant;
    for (let k = a; k < b; k++) {
      const r = region[k - a];
      if (r < 0) continue;
      const fin = this.finite(k);
      if (allConstant[r] && fin) continue;
      for (let i = 0; i < nu; i++) u[(k - a) * nu + i] = this.lawAt(r, i, k, fin);
    }
  }

  /** the lines of points a … b − 1 (located, laws evaluated) into out from `at`; returns the end */
  format(out: Uint8Array, at: number, a: number, b: number): number {
    const n = this.n;
    const nu = this.nu;
    const { values: all, fileCount, from, to } = this.pts;
    const region = this.region;
    const u = this.u;
    const numbers = this.numbers;
    const allConstant = this.allConstant;
    for (let k = a; k < b; k++) {
      const q0 = k * n;
      // θ: the input line's bytes when its cells are all copies, adjacent and in θ order
      let whole = k < fileCount && from[q0] >= 0;
      for (let j = 1; whole && j < n; j++) whole = from[q0 + j] >= 0 && from[q0 + j] === to[q0 + j - 1] + 1;
      if (whole) at = this.copy(out, at, from[q0], to[q0 + n - 1]);
      else
        for (let j = 0; j < n; j++) {
          if (j) out[at++] = 44;
          const f = k < fileCount ? from[q0 + j] : -1;
          if (f >= 0) at = this.copy(out, at, f, to[q0 + j]);
          else at = put(out, at, numbers.text(all[q0 + j]));
        }
      const r = region[k - a];
      if (r < 0) {
        at = put(out, at, this.noRegion);
        continue;
      }
      if (allConstant[r] && this.finite(k)) {
        at = put(out, at, this.constantTail(r));
        continue;
      }
      at = put(out, at, this.prefixOf(r));
      for (let i = 0; i < nu; i++) {
        out[at++] = 44;
        at = put(out, at, numbers.text(u[(k - a) * nu + i]));
      }
      out[at++] = 10;
    }
    return at;
  }
}

/**
 * The CSV lines of points k0 … k1 − 1 of `pts` (the header first when `header`), as byte chunks
 * of about `chunkPoints` lines: the body of `evaluateCsvBytes`, on its own so that worker threads
 * can each write a range (`src/table/evaluate-threads.ts`); the lines depend only on their point,
 * so ranges written apart and joined in order are the bytes of one run. `regions` (the table's) is
 * read only when the context has no index.
 */
export function* csvLines(
  ctx: CsvContext,
  pts: CsvPoints,
  k0: number,
  k1: number,
  header: boolean,
  chunkPoints: number | undefined,
  times: EvaluateTimes,
  regions: CriticalRegion[] | null,
): Generator<Uint8Array> {
  const now = (): number => performance.now() / 1000;
  const cpuTimes = times.cpu;
  const cpuNow = times.cpuNow ?? ((): number => 0);
  const chunk = Math.max(1, chunkPoints ?? 32768);
  const w = new CsvChunkWriter(ctx, pts, chunk, regions);
  let head: Uint8Array | null = header ? utf8.encode(ctx.header) : null;
  for (let a = k0; a < k1; a += chunk) {
    const b = Math.min(k1, a + chunk);
    const t0 = now();
    const c0 = cpuTimes ? cpuNow() : 0;
    w.locate(a, b);
    const t1 = now();
    times.locate += t1 - t0;
    const c1 = cpuTimes ? cpuNow() : 0;
    if (cpuTimes) cpuTimes.locate += c1 - c0;
    w.law(a, b);
    const t2 = now();
    times.law += t2 - t1;
    const c2 = cpuTimes ? cpuNow() : 0;
    if (cpuTimes) cpuTimes.law += c2 - c1;
    // formatted into one scratch array, handed out as a copy of the bytes used (about a third of the bound)
    const need = (head ? head.length : 0) + (b - a) * w.lineMax;
    if (w.scratch.length < need) w.scratch = new Uint8Array(need);
    const out = w.scratch;
    let at = 0;
    if (head) {
      out.set(head);
      at = head.length;
      head = null;
    }
    at = w.format(out, at, a, b);
    times.format += now() - t2;
    if (cpuTimes) cpuTimes.format += cpuNow() - c2;
    yield out.slice(0, at);
  }
  if (head) yield head;
}

/**
 * `evaluateCsvBytes` as text chunks (the same lines, decoded): for callers that want strings.
 */
export function* evaluateCsvChunks(
  table: TableFile,
  input: string | Uint8Array,
  points: FlatPoints,
  extra: number[][] = [],
  options: EvaluateOptions & { chunkPoints?: number; times?: EvaluateTimes } = {},
): Generator<string> {
  for (const c of evaluateCsvBytes(table, input, points, extra, options)) yield utf8Decoder.decode(c);
}
