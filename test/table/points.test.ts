import { describe, expect, it } from 'vitest';
import { join } from 'node:path';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { evaluateCsvBytes, evaluateCsvChunks, evaluationCsv, NumberText, orderRangePoints, parsePointsCsv, parsePointsFlat, parsePointsRange, pointsFileHead, SCAN_BELOW_POINTS } from '../../src/table/points.js';
import { splitLines } from '../../src/table/evaluate-threads.js';
import type { TableFile } from '../../src/table/format.js';
import { isFullTable, readTableLaws } from '../../src/table/evaluate-table.js';
import { tableToJson } from '../../src/table/table.js';
import { qpReference } from '../helpers/reference.js';
import { rng, root, solved } from '../helpers/solved.js';
import { runCli } from '../helpers/cli.js';

// References:
// - reading a cell: ECMAScript's StringToNumber (`Number(cell)`), applied here literally to the
//   trimmed cells of lines split at \r?\n (the points-CSV rule of the `tessera evaluate` contract);
// - echoing a cell: ECMAScript's Number::toString (`String(v)`, the shortest decimal that reads back
//   as v) — a cell is copied only where it equals that text;
// - location: the rule applied literally by a sequential scan written out below ("common practice":
//   the lowest index holding θ exactly, else the least largest residual within tol.inside = 1e-8);
// - u(0): quadprog (Goldfarb–Idnani dual QP, test/helpers/reference.ts) at each point, within 1e-6;
//   and, for the exact text, the region's law applied literally (g_i + F_i1 θ_1 + … in that order,
//   then the clamp to the input limits) printed by ECMAScript's Number::toString (`String`).

/**
 * A finite x > 0 as [D, E] with x = D·10^E exactly: a double is m·2^e (IEEE 754 binary64, its bit
 * fields read through a BigUint64Array), and 2^−k = 5^k·10^−k.
 */
function exact(x: number): [bigint, number] {
  const bits = new BigUint64Array(new Float64Array([x]).buffer)[0];
  const e = Number((bits >> 52n) & 0x7ffn);
  let m = bits & ((1n << 52n) - 1n);
  if (e) m |= 1n << 52n;
  const ex = (e || 1) - 1075;
  return ex >= 0 ? [m << BigInt(ex), 0] : [m * 5n ** BigInt(-ex), ex];
}

/** A cell in one of many spellings of a number (and, rarely, not a number at all). */
function cellText(rnd: () => number): string {
  const v = (rnd() - 0.5) * 10 ** Math.floor(rnd() * 10 - 5);
  switch (Math.floor(rnd() * 12)) {
    case 0:
      return String(v);
    case 1:
      return v.toPrecision(1 + Math.floor(rnd() * 17));
    case 2:
      return v.toExponential(Math.floor(rnd() * 16));
    case 3:
      return v.toFixed(Math.floor(rnd() * 12));
    case 4:
      return `+${Math.abs(v).toFixed(3)}`;
    case 5:
      return `00${Math.abs(v).toFixed(4)}`;
    case 6:
      return ['-0', '0', '0.0', '-0.000', '.5', '5.', '1e-7', '1E+3', '0.000001', '0.0000001', '123456789012345', '1234567890123456', '1e21', '100', '-100.10'][Math.floor(rnd() * 15)];
    case 7:
      return ` ${v.toFixed(2)} `;
    case 8:
      return String(Math.round(v * 1000) / 1000);
    case 9:
      return v.toPrecision(15);
    case 10:
      return v.toPrecision(7);
    default:
      return String(Math.fround(v));
  }
}

/** The contract's reading, literally: lines at \r?\n, trimmed, '' and '#' lines skipped, cells trimmed, Number. */
function literalRead(text: string): { cells: string[]; values: number[] }[] {
  return text
    .split(/\r?\n/)
    .map((l) => l.trim())
    .filter((l) => l !== '' && !l.startsWith('#'))
    .map((l) => {
      const cells = l.split(',').map((c) => c.trim());
      return { cells, values: cells.map(Number) };
    });
}

/** The location rule applied literally (see the header). */
function literalLocate(t: TableFile, th: ArrayLike<number>): number {
  let near = -1;
  let nearV = Infinity;
  for (let i = 0; i < t.regions.length; i++) {
    const r = t.regions[i];
    let worst = -Infinity;
    for (let k = 0; k < r.b.length; k++) {
      let s = 0;
      for (let j = 0; j < th.length; j++) s += r.A[k][j] * th[j];
      worst = Math.max(worst, s - r.b[k]);
    }
    if (worst <= 0) return i;
    if (worst <= 1e-8 && worst < nearV) {
      near = i;
      nearV = worst;
    }
  }
  return near;
}

describe('points CSV into one typed array (parsePointsFlat)', () => {
  it('reads every cell as Number does and copies only cells that String prints the same', () => {
    const rnd = rng(4242);
    const names = ['a', 'b', 'c'];
    // a comment beyond ASCII first: copied cells are located by byte offsets into the UTF-8 text
    const lines: string[] = ['# seeded cells, θ in º — ü', 'c, a ,b'];
    for (let k = 0; k < 4000; k++) {
      if (rnd() < 0.02) lines.push(rnd() < 0.5 ? '' : '# note');
      lines.push([cellText(rnd), cellText(rnd), cellText(rnd)].join(','));
    }
    const text = lines.join(rnd() < 2 ? '\r\n' : '\n') + '\n';
    const ref = literalRead(text);
    const bytes = new TextEncoder().encode(text);
    const got = parsePointsFlat(text, 'p.csv', names);
    // the same from the bytes as from the string
    const fromBytes = parsePointsFlat(bytes, 'p.csv', names);
    expect(fromBytes.values).toEqual(got.values);
    expect(fromBytes.from).toEqual(got.from);
    expect(got.count).toBe(ref.length - 1); // the header
    let copied = 0;
    for (let k = 0; k < got.count; k++) {
      const { cells, values } = ref[k + 1];
      // header "c, a ,b": θ = (a, b, c) is columns (2, 3, 1)
      const cols = [1, 2, 0];
      for (let j = 0; j < 3; j++) {
        const q = k * 3 + j;
        expect(Object.is(got.values[q], values[cols[j]]), `line ${k + 3} θ${j}: "${cells[cols[j]]}"`).toBe(true);
        if (got.from[q] >= 0) {
          copied++;
          expect(new TextDecoder().decode(bytes.subarray(got.from[q], got.to[q]))).toBe(String(values[cols[j]]));
        }
      }
    }
    expect(copied).toBeGreaterThan(2000);
    // the general path agrees too, point by point
    const general = parsePointsCsv(text, 'p.csv', names);
    expect(general.length).toBe(got.count);
  });

  it('line ends LF, CR LF, a last line without one or ending in CR, and cells that end early: as Number reads them', () => {
    // reference: the literal reading above (lines at \r?\n, trimmed, Number per cell); a file the
    // literal reading refuses must be refused with parsePointsCsv's message
    const rnd = rng(977);
    const names = ['a', 'b'];
    const tails = ['', ' ', '\r', 'x', '.', 'e', 'e5x', '\r5', '0000001', 'e0000001', 'e+0000001'];
    let good = 0;
    let refused = 0;
    for (let f = 0; f < 400; f++) {
      const lines: string[] = [];
      for (let k = 0; k < 6; k++) {
        const a = cellText(rnd);
        let b = cellText(rnd);
        if (rnd() < 0.3) b += tails[Math.floor(rnd() * tails.length)];
        if (rnd() < 0.2) b = (rnd() * 1e3).toPrecision(16 + Math.floor(rnd() * 3)) + tails[Math.floor(rnd() * tails.length)];
        lines.push(`${a},${b}`);
      }
      let text = '';
      lines.forEach((l, k) => (text += l + (k < lines.length - 1 ? (rnd() < 0.5 ? '\n' : '\r\n') : ['', '\n', '\r\n', '\r'][Math.floor(rnd() * 4)])));
      let expected = '';
      let ref: { cells: string[]; values: number[] }[] = [];
      try {
        parsePointsCsv(text, 'p.csv', names);
        ref = literalRead(text);
      } catch (e) {
        expected = (e as Error).message;
      }
      let got = '';
      let flat: ReturnType<typeof parsePointsFlat> | null = null;
      try {
        flat = parsePointsFlat(text, 'p.csv', names);
      } catch (e) {
        got = (e as Error).message;
      }
      expect(got, JSON.stringify(text)).toBe(expected);
      if (expected) {
        refused++;
        continue;
      }
      good++;
      expect(flat!.count).toBe(ref.length);
      const bytes = new TextEncoder().encode(text);
      ref.forEach((r, k) =>
        r.values.forEach((v, j) => {
          expect(Object.is(flat!.values[2 * k + j], v), `${JSON.stringify(text)} line ${k + 1}`).toBe(true);
          if (flat!.from[2 * k + j] >= 0) expect(new TextDecoder().decode(bytes.subarray(flat!.from[2 * k + j], flat!.to[2 * k + j]))).toBe(String(v));
        }),
      );
    }
    expect(good).toBeGreaterThan(20);
    expect(refused).toBeGreaterThan(20);
  });

  it('in ranges (the threaded path): files split at line ends anywhere, each range parsed alone, give what Number reads, in θ order after the header; a line that is not a point is refused by its range', () => {
    // reference: the literal reading (lines at \r?\n, trimmed, '' and '#' skipped, Number per cell)
    // and String for copied cells; the header test of the contract (no cell reads as a number)
    const rnd = rng(3141);
    const names = ['a', 'b', 'c'];
    let refused = 0;
    let split = 0;
    for (let f = 0; f < 150; f++) {
      const lines: string[] = [];
      if (rnd() < 0.3) lines.push(rnd() < 0.5 ? '' : '# comment — ü');
      const header = rnd() < 0.6;
      if (header) lines.push(['b', 'c', 'a'].join(rnd() < 0.5 ? ',' : ' , '));
      const bad = rnd() < 0.25;
      const count = 5 + Math.floor(rnd() * 200);
      for (let k = 0; k < count; k++) {
        if (rnd() < 0.03) lines.push(rnd() < 0.5 ? '  ' : '# note');
        const cells = [cellText(rnd), cellText(rnd), cellText(rnd)];
        if (bad && k === Math.floor(count * rnd())) cells[Math.floor(rnd() * 3)] = ['x', '', '1e', 'NaN', 'Infinity', '1,2'][Math.floor(rnd() * 6)];
        lines.push(cells.join(','));
      }
      const eol = rnd() < 0.5 ? '\n' : '\r\n';
      const text = lines.join(eol) + (rnd() < 0.8 ? eol : '');
      const bytes = new TextEncoder().encode(text);
      let expected: { cells: string[]; values: number[] }[] | null = null;
      try {
        parsePointsCsv(text, 'p.csv', ['a', 'b', 'c']);
        expected = literalRead(text);
      } catch {
        expected = null;
      }
      const head = pointsFileHead(bytes)!;
      expect(head.header).toBe(header);
      const order = header ? [2, 0, 1] : null; // header "b,c,a": θ = (a, b, c) is columns (3, 1, 2)
      const parts = 1 + Math.floor(rnd() * 5);
      const weights = Array.from({ length: parts }, () => rnd());
      const ranges = splitLines(bytes, head.dataStart, bytes.length, weights);
      // consecutive, covering the data, each ending after an LF or at the end
      expect(ranges[0][0]).toBe(head.dataStart);
      expect(ranges[parts - 1][1]).toBe(bytes.length);
      ranges.forEach(([a, b], t) => {
        expect(b).toBeGreaterThanOrEqual(a);
        if (t > 0) expect(a).toBe(ranges[t - 1][1]);
        if (b < bytes.length && b > a) expect(bytes[b - 1]).toBe(10);
      });
      if (ranges.filter(([a, b]) => b > a).length > 1) split++;
      const got = ranges.map(([a, b]) => parsePointsRange(bytes, a, b, names.length));
      if (expected === null) {
        // a bad line (or its neighbours' cells broken by it): some range refuses
        expect(got.some((g) => g === null), JSON.stringify(text.slice(0, 200))).toBe(true);
        refused++;
        continue;
      }
      const rows = expected.slice(header ? 1 : 0);
      let k = 0;
      for (const g of got) {
        expect(g).not.toBeNull();
        orderRangePoints(g!, 3, order);
        for (let q = 0; q < g!.count; q++, k++) {
          const { cells, values } = rows[k];
          for (let j = 0; j < 3; j++) {
            const col = order ? order[j] : j;
            expect(Object.is(g!.values[q * 3 + j], values[col]), `"${cells[col]}"`).toBe(true);
            if (g!.from[q * 3 + j] >= 0) expect(new TextDecoder().decode(bytes.subarray(g!.from[q * 3 + j], g!.to[q * 3 + j]))).toBe(String(values[col]));
          }
        }
      }
      expect(k).toBe(rows.length);
    }
    expect(refused).toBeGreaterThan(10);
    expect(split).toBeGreaterThan(50);
  });

  it('16 to 19 significant digits, near and at the midpoints between doubles: the double Number reads', () => {
    // reference: ECMAScript's StringToNumber (`Number(cell)`, correctly rounded, ties to even); the
    // midpoints are computed exactly with BigInt (a double is m·2^e; the midpoint of two neighbours
    // written in decimal), then cut to 16–19 digits and nudged by −1, 0, +1 in the last digit
    const rnd = rng(8128);
    const f64 = new Float64Array(1);
    const u64 = new BigUint64Array(f64.buffer);
    const midpoint = (x: number): string => {
      f64[0] = x;
      u64[0] += 1n;
      const [dx, ex] = exact(x);
      const [dy, ey] = exact(f64[0]);
      const E = Math.min(ex, ey) - 1;
      return String((dx * 10n ** BigInt(ex - E) + dy * 10n ** BigInt(ey - E)) / 2n) + `e${E}`;
    };
    const digits = (k: number): string => {
      let t = String(1 + Math.floor(rnd() * 9));
      for (let i = 1; i < k; i++) t += Math.floor(rnd() * 10);
      return t;
    };
    const cells: string[] = [];
    let midpoints = 0;
    for (let i = 0; i < 60000; i++) {
      const k = 16 + Math.floor(rnd() * 4);
      const sign = rnd() < 0.3 ? '-' : '';
      switch (i % 4) {
        case 0: {
          const d = digits(k);
          const pt = Math.floor(rnd() * (k + 1));
          cells.push(`${sign}${d.slice(0, pt) || '0'}.${d.slice(pt)}`);
          break;
        }
        case 1:
          cells.push(`${sign}${digits(k)}e${Math.floor(rnd() * 44) - 22 - (k - 1) + Math.floor(rnd() * 8)}`);
          break;
        case 2:
          cells.push(sign + (rnd() * 10 ** (Math.floor(rnd() * 24) - 8)).toPrecision(k));
          break;
        default: {
          // a midpoint written with all its digits (exact: a tie), and cut to k digits ± 1 in the last
          const x = 10 ** (Math.floor(rnd() * 24) - 8) * (1 + rnd());
          const [d, e] = midpoint(x).split('e');
          if (d.length <= 19) {
            cells.push(`${d}e${e}`);
            midpoints++;
          }
          const head = BigInt(d.slice(0, k)) + BigInt(Math.floor(rnd() * 3) - 1);
          cells.push(`${sign}${head}e${Number(e) + d.length - k}`);
        }
      }
    }
    // and what String prints for random doubles (mostly 16 and 17 digits), and those texts one digit off
    for (let i = 0; i < 20000; i++) {
      const x = (rnd() - 0.3) * 10 ** (Math.floor(rnd() * 26) - 6);
      const t = String(x);
      cells.push(i % 4 === 3 ? t.replace(/(\d)$/, (m) => String((Number(m) + 1) % 10)) : t);
    }
    const text = cells.join('\n') + '\n';
    const bytes = new TextEncoder().encode(text);
    const got = parsePointsFlat(bytes, 'p.csv', ['a']);
    expect(got.count).toBe(cells.length);
    let wrong = 0;
    let printed = 0;
    let copied = 0;
    cells.forEach((c, i) => {
      if (!Object.is(got.values[i], Number(c))) wrong++;
      expect(Object.is(got.values[i], Number(c)), c).toBe(true);
      // a cell is copied only when it is what String prints (ECMAScript Number::toString)
      if (got.from[i] >= 0) expect(new TextDecoder().decode(bytes.subarray(got.from[i], got.to[i])), c).toBe(String(Number(c)));
      // (below 10¹²: larger values have fractional digits as coarse as the doubles' spacing, where a
      // decimal can be exactly halfway and the reading leaves the text to String)
      if (c === String(Number(c)) && /^-?\d*\.\d+$/.test(c) && Math.abs(Number(c)) < 1e12 && c.replace(/[-.]/g, '').replace(/^0+/, '').length >= 16) {
        printed++;
        if (got.from[i] >= 0) copied++;
      }
    });
    expect(wrong).toBe(0);
    expect(midpoints).toBeGreaterThan(100);
    // nearly every 16–17 digit text that String prints is recognised as such (ties and the margin aside)
    expect(printed).toBeGreaterThan(4000);
    expect(copied).toBeGreaterThan(0.99 * printed);
  });

  it('16–19 digit fractions continued from the first 15 digits: Number\'s double, and copied exactly when String prints that text, also where a 16-digit neighbour lies at a half gap', () => {
    // references: ECMAScript's StringToNumber (`Number(cell)`) for the value and Number::toString
    // (`String(v)`) for the copy; the half gaps are computed exactly with BigInt (a double is m·2^e)
    const rnd = rng(4217);
    const f64 = new Float64Array(1);
    const u64 = new BigUint64Array(f64.buffer);
    /** the fixed-notation text of D·10^E (E < 0), e.g. 0.000123 */
    const fixed = (D: bigint, E: number): string => {
      const t = D.toString().padStart(-E + 1, '0');
      return `${t.slice(0, t.length + E)}.${t.slice(t.length + E)}`;
    };
    const cells: string[] = [];
    for (let i = 0; i < 6000; i++) {
      // values of 10⁻⁷ … 10⁵: fractions with and without leading zeros after the point
      const x = (0.5 + rnd()) * 10 ** (Math.floor(rnd() * 13) - 7);
      for (const p of [16, 17, 18, 19]) cells.push(x.toPrecision(p), `-${x.toPrecision(p)}`);
      cells.push(String(x));
      // the midpoint between x and the next double, written exactly; its 16-digit cuts (down and up)
      // and the 17-digit decimals around them: decimals whose 16-digit neighbour is at a half gap
      f64[0] = x;
      u64[0] += 1n;
      const [dx, ex] = exact(x);
      const [dy, ey] = exact(f64[0]);
      const E = Math.min(ex, ey) - 1;
      const mid = dx * 10n ** BigInt(ex - E) + dy * 10n ** BigInt(ey - E);
      const len = mid.toString().length;
      if (E >= 0 || len < 17) continue;
      const cut = mid / 10n ** BigInt(len - 16);
      const e16 = E + len - 16;
      for (const c16 of [cut, cut + 1n]) {
        if (e16 < 0) cells.push(fixed(c16, e16));
        for (const r of [-1n, 0n, 1n, 5n, 9n]) if (e16 - 1 < 0) cells.push(fixed(c16 * 10n + r, e16 - 1));
      }
    }
    const bytes = new TextEncoder().encode(cells.join('\n') + '\n');
    const got = parsePointsFlat(bytes, 'p.csv', ['a']);
    expect(got.count).toBe(cells.length);
    const dec = new TextDecoder();
    let printed = 0;
    let copied = 0;
    cells.forEach((c, i) => {
      expect(Object.is(got.values[i], Number(c)), c).toBe(true);
      const canon = c === String(Number(c));
      if (got.from[i] >= 0) expect(dec.decode(bytes.subarray(got.from[i], got.to[i])), c).toBe(String(Number(c)));
      if (canon && /^-?\d+\.\d{15,}$/.test(c)) {
        printed++;
        if (got.from[i] >= 0) copied++;
      }
    });
    expect(printed).toBeGreaterThan(6000);
    expect(copied).toBeGreaterThan(0.99 * printed);
  });

  it('refuses what the general reading refuses, with the same message', () => {
    const names = ['a', 'b'];
    const cases = ['1,2\n3', '1,2\n1,2,3', '1,x', '1,', '1,-', '1,1e', '1,Infinity', '1,1e999', '1,.', '1,0x', 'a,b\n1,,2', 'a,c\n1,2'];
    // after a good first line too, so that the bad line meets the character scan
    for (const bad of [...cases, ...cases.map((c) => `0,0\n${c}`)]) {
      let expected = '';
      let got = '';
      try {
        parsePointsCsv(bad, 'p.csv', names);
      } catch (e) {
        expected = (e as Error).message;
      }
      try {
        parsePointsFlat(bad, 'p.csv', names);
      } catch (e) {
        got = (e as Error).message;
      }
      expect(expected, bad).not.toBe('');
      expect(got, bad).toBe(expected);
    }
  });
});

describe('evaluateCsvChunks (the CSV path of tessera evaluate)', () => {
  const file = join(root, 'examples', 'positioning-axis.yaml');

  it('region = the literal location rule, u(0) = quadprog, θ read back unchanged, in chunks', () => {
    const { table, mpqp } = solved(file);
    expect(table.regions.length).toBeGreaterThan(32); // the k-d tree path, not the small-table scan
    const rnd = rng(77);
    const n = table.dims.ntheta;
    const rows: string[] = [];
    for (let k = 0; k < 1500; k++) rows.push(Array.from({ length: n }, (_, j) => (table.box.lower[j] + (1.1 * rnd() - 0.05) * (table.box.upper[j] - table.box.lower[j])).toPrecision(k % 2 ? 17 : 6)).join(','));
    // Chebyshev centres and points on a facet: where the rule between neighbours matters
    for (const r of table.regions.slice(0, 100)) {
      const c = r.chebyshev.center;
      let s = r.b[0];
      for (let j = 0; j < n; j++) s -= r.A[0][j] * c[j];
      rows.push(c.join(','), c.map((x, j) => x + s * r.A[0][j]).join(','));
    }
    const text = rows.join('\n');
    const flat = parsePointsFlat(text, 'p.csv', table.thetaNames);
    const at = [[0.01, -0.02]];
    const chunks = [...evaluateCsvChunks(table, text, flat, at, { chunkPoints: 97 })];
    expect(chunks.length).toBe(Math.ceil((flat.count + 1) / 97));
    const out = chunks.join('').split('\n');
    expect(out[0]).toBe([...table.thetaNames, 'region', ...table.inputNames].join(','));
    expect(out[out.length - 1]).toBe('');
    const lines = out.slice(1, -1);
    expect(lines.length).toBe(rows.length + 1);
    let inRegion = 0;
    lines.forEach((line, k) => {
      const cells = line.split(',');
      const th = k < rows.length ? rows[k].split(',').map(Number) : at[0];
      cells.slice(0, n).forEach((c, j) => expect(Number(c)).toBe(th[j]));
      const region = Number(cells[n]);
      expect(region, `θ = ${th}`).toBe(literalLocate(table, th));
      const u = cells.slice(n + 1);
      expect(u.length).toBe(table.dims.nu);
      if (region < 0) {
        expect(u.every((x) => x === '')).toBe(true);
        return;
      }
      const ref = qpReference(mpqp, th);
      if (!ref.feasible) return; // held only by the slack, just outside the feasible set
      inRegion++;
      u.forEach((x, i) => expect(Math.abs(Number(x) - ref.z[i])).toBeLessThan(1e-6 * Math.max(1, Math.abs(ref.z[i]))));
    });
    expect(inRegion).toBeGreaterThan(800);
    // and the same bytes as the per-point path of the library
    expect(chunks.join('')).toBe(evaluationCsv(table, [...parsePointsCsv(text, 'p.csv', table.thetaNames), ...at]));
  });

  it(`fewer than ${SCAN_BELOW_POINTS} points (located by a scan, no tree built): region = the literal rule, u(0) = quadprog, the lines of the tree path`, () => {
    const { table, mpqp } = solved(file);
    expect(table.regions.length).toBeGreaterThan(32);
    const rnd = rng(91);
    const n = table.dims.ntheta;
    const rows: string[] = [];
    for (let k = 0; k < SCAN_BELOW_POINTS; k++) rows.push(Array.from({ length: n }, (_, j) => String(table.box.lower[j] + (1.1 * rnd() - 0.05) * (table.box.upper[j] - table.box.lower[j]))).join(','));
    for (const r of table.regions.slice(0, 200)) rows[rows.length - 1 - (r.b.length % 400)] = r.chebyshev.center.join(',');
    const few = rows.slice(0, SCAN_BELOW_POINTS - 1).join('\n');
    const all = rows.join('\n');
    const scanned = [...evaluateCsvChunks(table, few, parsePointsFlat(few, 'p.csv', table.thetaNames))].join('').split('\n');
    const indexed = [...evaluateCsvChunks(table, all, parsePointsFlat(all, 'p.csv', table.thetaNames))].join('').split('\n');
    expect(scanned.length).toBe(SCAN_BELOW_POINTS + 1);
    expect(scanned.slice(0, -1)).toEqual(indexed.slice(0, SCAN_BELOW_POINTS));
    let inRegion = 0;
    scanned.slice(1, -1).forEach((line, k) => {
      const cells = line.split(',');
      const th = rows[k].split(',').map(Number);
      expect(Number(cells[n]), `θ = ${th}`).toBe(literalLocate(table, th));
      if (cells[n] === '-1') return;
      const ref = qpReference(mpqp, th);
      if (!ref.feasible) return;
      inRegion++;
      cells.slice(n + 1).forEach((x, i) => expect(Math.abs(Number(x) - ref.z[i])).toBeLessThan(1e-6 * Math.max(1, Math.abs(ref.z[i]))));
    });
    expect(inRegion).toBeGreaterThan(500);
  });

  it('--clamp: u(0) = quadprog saturated to the input limits; --points and --at together through the CLI', async () => {
    const { table, mpqp } = solved(file);
    const dir = mkdtempSync(join(tmpdir(), 'tessera-points-'));
    try {
      const tablePath = join(dir, 't.json');
      const { tableToJson } = await import('../../src/table/table.js');
      writeFileSync(tablePath, tableToJson(table));
      const rnd = rng(91);
      const n = table.dims.ntheta;
      const pts = Array.from({ length: 400 }, () => Array.from({ length: n }, (_, j) => Number((table.box.lower[j] + rnd() * (table.box.upper[j] - table.box.lower[j])).toPrecision(5))));
      // header in reversed order: columns are matched by name
      const names = [...table.thetaNames].reverse();
      const csv = [names.join(','), ...pts.map((p) => [...p].reverse().join(','))].join('\n') + '\n';
      writeFileSync(join(dir, 'p.csv'), csv);
      const r = await runCli(['evaluate', tablePath, '--points', join(dir, 'p.csv'), '--at', '0.05,0.1', '--clamp', '-q']);
      expect(r.stderr).toBe('');
      expect(r.status).toBe(0);
      const lines = r.stdout.trim().split('\n').slice(1);
      expect(lines.length).toBe(pts.length + 1);
      const lo = table.inputLimits.lower.map((v) => v ?? -Infinity);
      const hi = table.inputLimits.upper.map((v) => v ?? Infinity);
      let compared = 0;
      lines.forEach((line, k) => {
        const th = k < pts.length ? pts[k] : [0.05, 0.1];
        const cells = line.split(',');
        expect(cells.slice(0, n).join(',')).toBe(th.map(String).join(','));
        expect(Number(cells[n])).toBe(literalLocate(table, th));
        const ref = qpReference(mpqp, th);
        if (Number(cells[n]) < 0 || !ref.feasible) return;
        compared++;
        cells.slice(n + 1).forEach((x, i) => expect(Math.abs(Number(x) - Math.min(hi[i], Math.max(lo[i], ref.z[i])))).toBeLessThan(1e-6));
      });
      expect(compared).toBeGreaterThan(100);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});

/** u(0) of region r at θ applied literally (g first, then + F_ij θ_j in j order), clamped when asked. */
function literalLaw(t: TableFile, r: number, th: number[], clamp: boolean): number[] {
  const { F, g } = t.regions[r].law;
  return g.map((gi, i) => {
    let s = gi;
    for (let j = 0; j < th.length; j++) s += F[i][j] * th[j];
    const lo = t.inputLimits.lower[i];
    const hi = t.inputLimits.upper[i];
    if (clamp && lo !== null && lo !== undefined && s < lo) s = lo;
    if (clamp && hi !== null && hi !== undefined && s > hi) s = hi;
    return s;
  });
}

/** Every line of an evaluate CSV against the literal rules: θ as String prints it, the literal scan's region, String of the literal law. */
function checkCsvLiterally(t: TableFile, csv: string, thetas: number[][], clamp: boolean): { constant: number; inRegion: number } {
  const lines = csv.split('\n');
  expect(lines[0]).toBe([...t.thetaNames, 'region', ...t.inputNames].join(','));
  expect(lines[lines.length - 1]).toBe('');
  expect(lines.length - 2).toBe(thetas.length);
  const n = t.dims.ntheta;
  let constant = 0;
  let inRegion = 0;
  thetas.forEach((th, k) => {
    const cells = lines[k + 1].split(',');
    expect(cells.slice(0, n)).toEqual(th.map((v) => String(v)));
    const r = literalLocate(t, th);
    expect(Number(cells[n]), `θ = ${th}`).toBe(r);
    if (r < 0) {
      expect(cells.slice(n + 1)).toEqual(t.inputNames.map(() => ''));
      return;
    }
    inRegion++;
    if (t.regions[r].law.F.every((row) => row.every((f) => f === 0))) constant++;
    expect(cells.slice(n + 1), `θ = ${th}, region ${r}`).toEqual(literalLaw(t, r, th, clamp).map((v) => String(v)));
  });
  return { constant, inRegion };
}

describe('the formatting of tessera evaluate against String and the literal rules', () => {
  it('NumberText (the String cache) prints what String prints, on repeated, random and edge doubles', () => {
    // reference: ECMAScript Number::toString (String(v)); 2·10⁶ values, a third of them repeats
    const cache = new NumberText();
    const f64 = new Float64Array(1);
    const u32 = new Uint32Array(f64.buffer);
    const rnd = rng(2026);
    const edge = [0, -0, 1, -1, 5e-324, -5e-324, 2.2250738585072014e-308, 1.7976931348623157e308, 1e21, 999999999999999900000, 1e-6, 1e-7, 0.1, 0.3, 2 ** 53, 2 ** 53 + 2, 123e-20, 1.9999999999999993, -2, NaN, Infinity, -Infinity];
    const recent: number[] = [];
    let checked = 0;
    for (let k = 0; k < 2_000_000; k++) {
      let v: number;
      const pick = rnd();
      if (pick < 0.05) v = edge[Math.floor(rnd() * edge.length)];
      else if (pick < 0.35 && recent.length) v = recent[Math.floor(rnd() * recent.length)];
      else if (pick < 0.65) {
        // any bit pattern: subnormals, huge and tiny exponents
        u32[0] = Math.floor(rnd() * 2 ** 32);
        u32[1] = Math.floor(rnd() * 2 ** 32);
        v = f64[0];
      } else v = (rnd() - 0.5) * 10 ** Math.floor(rnd() * 40 - 20);
      if (recent.length < 64) recent.push(v);
      else recent[k % 64] = v;
      const got = cache.text(v);
      if (got !== String(v)) expect(got, `bits ${u32[1].toString(16)} ${u32[0].toString(16)}`).toBe(String(v));
      checked++;
    }
    expect(checked).toBe(2_000_000);
  });

  it('saturated (constant-law) regions, the clamp, random and facet points: every cell as the literal rules print it', () => {
    // the saturated laws of a solved table have F rows of ~1e-17, not 0: rows below 1e-12 are set to
    // exactly 0 here (a table may hold such laws), so that the constant-law path is taken
    const solvedTable = solved(join(root, 'examples', 'positioning-axis.yaml')).table;
    const table: TableFile = structuredClone(solvedTable);
    for (const r of table.regions) r.law.F = r.law.F.map((row) => (row.every((f) => Math.abs(f) < 1e-12) ? row.map(() => 0) : row));
    const n = table.dims.ntheta;
    const rnd = rng(515);
    const thetas: number[][] = [];
    for (let k = 0; k < 3000; k++) thetas.push(Array.from({ length: n }, (_, j) => table.box.lower[j] + (1.2 * rnd() - 0.1) * (table.box.upper[j] - table.box.lower[j])));
    // on a facet of each region (its Chebyshev centre moved onto a row), and the centres themselves
    for (const r of table.regions) {
      const c = r.chebyshev.center;
      thetas.push([...c]);
      r.A.forEach((a, i) => {
        let s = r.b[i];
        let nn = 0;
        for (let j = 0; j < n; j++) {
          s -= a[j] * c[j];
          nn += a[j] * a[j];
        }
        if (i % 3 === 0) thetas.push(c.map((x, j) => x + (s * a[j]) / nn));
      });
    }
    // written in a mix of spellings (the 7-digit ones are copied, 17-digit ones formatted again)
    const text = thetas.map((th, k) => th.map((v) => (k % 2 ? String(v) : String(Number(v.toPrecision(7))))).join(',')).join('\n') + '\n';
    const read = thetas.map((th, k) => (k % 2 ? th : th.map((v) => Number(v.toPrecision(7)))));
    const flat = parsePointsFlat(text, 'p.csv', table.thetaNames);
    for (const clamp of [false, true]) {
      const chunks = [...evaluateCsvBytes(table, new TextEncoder().encode(text), flat, [], { clamp, chunkPoints: 501 })];
      const csv = chunks.map((c) => new TextDecoder().decode(c)).join('');
      const { constant, inRegion } = checkCsvLiterally(table, csv, read, clamp);
      expect(inRegion).toBeGreaterThan(1500);
      expect(constant).toBeGreaterThan(100); // the saturated shortcut was taken
      // the string chunks carry the same text
      expect([...evaluateCsvChunks(table, text, flat, [], { clamp, chunkPoints: 501 })].join('')).toBe(csv);
    }
  });

  it('through the CLI: a byte-order mark, CRLF, a non-ASCII comment and a reordered header', async () => {
    const { table } = solved(join(root, 'examples', 'positioning-axis.yaml'));
    const dir = mkdtempSync(join(tmpdir(), 'tessera-points-'));
    try {
      const tablePath = join(dir, 't.json');
      const { tableToJson } = await import('../../src/table/table.js');
      writeFileSync(tablePath, tableToJson(table));
      const n = table.dims.ntheta;
      const rnd = rng(616);
      const thetas = Array.from({ length: 2000 }, (_, k) => Array.from({ length: n }, (_, j) => {
        const v = table.box.lower[j] + rnd() * (table.box.upper[j] - table.box.lower[j]);
        return k % 3 === 0 ? v : Number(v.toPrecision(4));
      }));
      const names = [...table.thetaNames].reverse();
      const rows = thetas.map((th, k) => [...th].reverse().map((v) => (k % 5 === 1 ? `+${v}`.replace('+-', '-') : String(v))).join(','));
      const csv = '\ufeff# θ drawn uniformly — ±\r\n' + names.join(',') + '\r\n' + rows.join('\r\n') + '\r\n';
      writeFileSync(join(dir, 'p.csv'), csv);
      for (const clamp of [false, true]) {
        const r = await runCli(['evaluate', tablePath, '--points', join(dir, 'p.csv'), '-q', ...(clamp ? ['--clamp'] : [])]);
        expect(r.stderr).toBe('');
        expect(r.status).toBe(0);
        const { inRegion } = checkCsvLiterally(table, r.stdout, thetas, clamp);
        expect(inRegion).toBeGreaterThan(1000);
      }
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });

  it('--times through the CLI: same output, one stderr line whose stages add up to its total, within the wall clock measured outside', async () => {
    // reference (common practice): stages that partition a run add up to its total, and the child's
    // own total is no longer than the parent's clock around the whole child process
    const { table } = solved(join(root, 'examples', 'positioning-axis.yaml'));
    const dir = mkdtempSync(join(tmpdir(), 'tessera-times-'));
    try {
      const tablePath = join(dir, 't.json');
      const { tableToJson } = await import('../../src/table/table.js');
      writeFileSync(tablePath, tableToJson(table));
      const rnd = rng(5150);
      const n = table.dims.ntheta;
      const rows = Array.from({ length: 3000 }, () => Array.from({ length: n }, (_, j) => String(Number((table.box.lower[j] + rnd() * (table.box.upper[j] - table.box.lower[j])).toPrecision(6)))).join(','));
      writeFileSync(join(dir, 'p.csv'), rows.join('\n') + '\n');
      const at = table.box.lower.map((v, j) => String((v + table.box.upper[j]) / 2)).join(',');
      for (const json of [false, true]) {
        const args = ['evaluate', tablePath, '--points', join(dir, 'p.csv'), '--at', at, '-q', ...(json ? ['--json'] : [])];
        const plain = await runCli(args);
        const t0 = performance.now();
        const timed = await runCli([...args, '--times']);
        const outside = (performance.now() - t0) / 1000;
        expect(plain.status).toBe(0);
        expect(timed.status).toBe(0);
        expect(timed.stdout).toBe(plain.stdout);
        expect(plain.stderr).toBe('');
        const m = /^tessera: times \(wall\/CPU seconds\): (.*); total ([\d.]+)\/([\d.]+) for (\d+) points = ([\d.]+) M points\/s wall \(([\d.]+) M per CPU second\)\n$/.exec(timed.stderr);
        expect(m, timed.stderr).not.toBeNull();
        const stages = m![1].split(', ').map((s) => /^([a-z-]+) ([\d.]+)\/([\d.]+)$/.exec(s)!);
        const names = stages.map((s) => s[1]);
        expect(names).toEqual(json ? ['start-up', 'table', 'points', 'evaluate', 'write'] : ['start-up', 'table', 'points', 'index', 'locate', 'law', 'format', 'write']);
        const wall = Number(m![2]);
        const cpuTotal = Number(m![3]);
        expect(Number(m![4])).toBe(3001);
        // each stage printed to 0.01 s: the sum within half a hundredth per stage (and the line's own few ms)
        const sumWall = stages.reduce((a, s) => a + Number(s[2]), 0);
        const sumCpu = stages.reduce((a, s) => a + Number(s[3]), 0);
        expect(Math.abs(sumWall - wall)).toBeLessThanOrEqual(0.005 * stages.length + 0.02);
        expect(Math.abs(sumCpu - cpuTotal)).toBeLessThanOrEqual(0.005 * stages.length + 0.02);
        expect(wall).toBeLessThanOrEqual(outside + 0.01);
        expect(wall).toBeGreaterThan(0);
        expect(Number(m![5])).toBeCloseTo(3001 / wall / 1e6, 2);
      }
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});

describe('readTableLaws (evaluate --index: a table read for its header and laws only)', () => {
  const file = join(root, 'examples', 'positioning-axis.yaml');
  const enc = new TextEncoder();

  // Reference: ECMAScript's JSON.parse of the whole file text (what readTableFile parses), compared
  // key for key; the laws as the same doubles (Object.is on every entry).
  it('gives the header keys and every law that JSON.parse of the whole text gives, lean and full', () => {
    const { table } = solved(file);
    for (const lean of [false, true]) {
      const t = lean ? { ...table, lean: true, regions: table.regions.map(({ moves: _m, value: _v, ...r }) => r) } : table;
      const text = tableToJson(t as TableFile);
      const whole = JSON.parse(text) as TableFile;
      const got = readTableLaws(enc.encode(text), 't.json');
      expect(got, `lean ${lean}`).not.toBeNull();
      const { regions, lawsOnly, ...head } = got!;
      const { regions: wholeRegions, ...wholeHead } = whole;
      expect(lawsOnly).toBe(true);
      expect(head).toEqual(wholeHead);
      expect(regions.length).toBe(wholeRegions.length);
      let entries = 0;
      regions.forEach(({ law }, r) => {
        const ref = wholeRegions[r].law;
        expect(law.g.length).toBe(ref.g.length);
        law.g.forEach((v, i) => {
          expect(Object.is(v, ref.g[i])).toBe(true);
          ref.F[i].forEach((f, j) => expect(Object.is(law.F[i][j], f)).toBe(true));
          entries += 1 + ref.F[i].length;
        });
      });
      expect(entries).toBeGreaterThan(100);
      expect(isFullTable(got!)).toBe(false);
      expect(isFullTable(whole)).toBe(true);
    }
  });

  it('null (read the file in full instead) for any other layout or a law it cannot vouch for', () => {
    const { table } = solved(file);
    const text = tableToJson(table);
    const lines = text.split('\n');
    const first = lines.findIndex((l) => l.startsWith('{"id":'));
    expect(first).toBeGreaterThan(0);
    const withLine = (f: (l: string) => string): string => lines.map((l, k) => (k === first ? f(l) : l)).join('\n');
    const cases: Record<string, string> = {
      // the same table, other layouts: pretty-printed, one line
      pretty: JSON.stringify(JSON.parse(text), null, 2),
      compact: JSON.stringify(JSON.parse(text)),
      // a region line without a law, with two, with a law of the wrong width, with a law that is not JSON
      noLaw: withLine((l) => l.replace('"law":{', '"wal":{')),
      twoLaws: withLine((l) => l.replace('"id":', '"law":{"F":[[1,2]],"g":[0]},"id":')),
      narrow: withLine((l) => l.replace(/"law":\{"F":\[\[([^,\]]+),/, '"law":{"F":[[')),
      notJson: withLine((l) => l.replace(/"law":\{"F":\[\[/, '"law":{"F":[[x')),
      stringEntry: withLine((l) => l.replace(/"law":\{"F":\[\[/, '"law":{"F":[["1",')),
      // a header that checkTable refuses, the array not closed on its own line
      badHeader: text.replace('"format": "tessera-table"', '"format": "other"'),
      unclosed: text.replace('}\n ],\n "stats"', '}\n],\n "stats"'),
    };
    for (const [name, t] of Object.entries(cases)) {
      expect(t, name).not.toBe(text);
      expect(readTableLaws(enc.encode(t), 't.json'), name).toBeNull();
    }
  });
});
