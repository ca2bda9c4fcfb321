/**
 * Regions held compactly: every number of a region and of the box holding it in two growing typed
 * arrays (doubles and 32-bit integers), a region read back as a new object only when asked for.
 *
 * The main thread of a threaded exploration (src/table/threads.ts) keeps the union of the regions
 * its workers report, and needs them whole only at the end (or for a checkpoint). As objects
 * (nested arrays, a facet object each) a lean 3-D region took ~4 kB of its heap, held beside the
 * worker's own copy while the exploration ran; packed it takes its numbers' bytes (about 8 B per
 * double and 4 B per integer, ~0.5 kB for a lean 3-D region of 8 facets).
 *
 * `get` gives back the region with the same keys in the same order and the same numbers (every
 * double as it was, −0 included), so JSON written from it is the same text. A region of a shape
 * this store does not know (extra keys, a key out of order, non-integer indices) is kept as the
 * object it is.
 */
import type { CriticalRegion, FacetInfo } from '../mpqp/types.js';
import { packedNz, packedTail } from '../mpqp/region.js';

/** A box holding a region (as the exploration reports it). */
export interface StoredBox {
  lo: number[];
  hi: number[];
}

const KINDS: FacetInfo['kind'][] = ['primal', 'dual', 'box'];
/** entries per block (8 MiB of doubles, 4 MiB of integers) */
const BLOCK = 1 << 20;
const KIND_CODE: Record<string, number> = { primal: 0, dual: 1, box: 2 };
const LEAN_KEYS = 'id,activeSet,A,b,facets,chebyshev,law';
const FULL_KEYS = 'id,activeSet,A,b,facets,chebyshev,law,moves,value';

/** True when `v` is a 32-bit integer (what the integer array holds exactly). */
const int32 = (v: unknown): v is number => typeof v === 'number' && (v | 0) === v && !Object.is(v, -0);

/**
 * Append-only store of regions and their boxes (see the file comment). Indices are dense, in the
 * order of `add`. The arrays returned by `get` are new (the caller owns them).
 */
export class RegionStore {
  /** blocks of numbers, each region's within one block (no block is copied to grow: no spike of twice the bytes) */
  private fBlocks: Float64Array[] = [];
  private iBlocks: Int32Array[] = [];
  /** the block being filled, and how much of it is used */
  private f = new Float64Array(0);
  private i = new Int32Array(0);
  private nf = 0;
  private ni = 0;
  /** bytes of the blocks filled before the current ones */
  private before = 0;
  /** per region: block · 2^26 + its start in that integer block (its double block and start are stored there); −1 − k for the k-th object kept as it is */
  private starts: number[] = [];
  private objects: { region: CriticalRegion; box: StoredBox }[] = [];
  /** per region, its text rendered ahead (`setText`), attached by `get` */
  private texts: (RegionText | undefined)[] = [];

  /** Number of regions held. */
  get length(): number {
    return this.starts.length;
  }

  /** Bytes of the typed arrays in use (the objects kept whole are not counted). */
  get bytes(): number {
    return this.before + 8 * this.nf + 4 * this.ni;
  }

  /** Room for `nf` doubles and `ni` integers in the current blocks (new blocks of 2^20 entries, or more, when they lack it). */
  private reserve(nf: number, ni: number): void {
    if (this.nf + nf > this.f.length) {
      this.before += 8 * this.nf;
      this.f = new Float64Array(Math.max(BLOCK, nf));
      this.fBlocks.push(this.f);
      this.nf = 0;
    }
    if (this.ni + ni > this.i.length) {
      this.before += 4 * this.ni;
      this.i = new Int32Array(Math.max(BLOCK, ni));
      this.iBlocks.push(this.i);
      this.ni = 0;
    }
  }

  private pushF(v: number): void {
    this.f[this.nf++] = v;
  }

  private pushI(v: number): void {
    this.i[this.ni++] = v;
  }

  /** Whether the store can pack this region exactly (else it keeps the object). */
  static packable(R: CriticalRegion, box: StoredBox): boolean {
    const keys = Object.keys(R).join(',');
    const full = keys === FULL_KEYS;
    if (!full && keys !== LEAN_KEYS) return false;
    const nt = box.lo.length;
    if (box.hi.length !== nt || Object.keys(box).join(',') !== 'lo,hi') return false;
    if (!int32(R.id) || !Array.isArray(R.activeSet) || !R.activeSet.every(int32)) return false;
    const m = R.b.length;
    if (!Array.isArray(R.A) || R.A.length !== m || !R.A.every((a) => Array.isArray(a) && a.length === nt)) return false;
    if (!Array.isArray(R.facets) || R.facets.length !== m) return false;
    for (const fi of R.facets)
      if (Object.keys(fi).join(',') !== 'kind,row,neighbours' || !(fi.kind in KIND_CODE) || !int32(fi.row) || !Array.isArray(fi.neighbours) || !fi.neighbours.every(int32)) return false;
    const c = R.chebyshev;
    if (!c || Object.keys(c).join(',') !== 'center,radius' || !Array.isArray(c.center) || c.center.length !== nt || typeof c.radius !== 'number') return false;
    const affine = (x: unknown): boolean => {
      const a = x as { F: unknown; g: unknown };
      return !!a && Object.keys(a).join(',') === 'F,g' && Array.isArray(a.g) && Array.isArray(a.F) && a.F.length === a.g.length && (a.F as unknown[]).every((r) => Array.isArray(r) && r.length === nt);
    };
    // a region built by buildRegion keeps moves and value packed, in the record's order (read as is)
    const P = full ? packedTail(R) : undefined;
    if (P) {
      if (!affine(R.law) || !Number.isInteger(packedNz(P.length, nt))) return false;
    } else if (!affine(R.law) || (full && !affine(R.moves))) return false;
    if (full && !P) {
      const v = R.value!;
      if (!v || Object.keys(v).join(',') !== 'Q,q,r' || typeof v.r !== 'number' || !Array.isArray(v.q) || v.q.length !== nt || !Array.isArray(v.Q) || v.Q.length !== nt || !v.Q.every((r) => Array.isArray(r) && r.length === nt)) return false;
    }
    const numbers = (a: unknown[]): boolean => a.every((x) => typeof x === 'number');
    return numbers(R.b) && R.A.every(numbers) && numbers(c.center) && numbers(box.lo) && numbers(box.hi);
  }

  /** Add a region and a box holding it; its index. The objects given are not kept (unless the store cannot pack them). */
  add(R: CriticalRegion, box: StoredBox): number {
    const index = this.starts.length;
    if (!RegionStore.packable(R, box)) {
      this.starts.push(-1 - this.objects.length);
      this.objects.push({ region: R, box });
      return index;
    }
    const { ni, nf } = recordSizes(R, box);
    this.reserve(nf, ni + 2);
    this.starts.push((this.iBlocks.length - 1) * 2 ** 26 + this.ni);
    // integers: double block and start, then the record (`writeRecord`)
    this.pushI(this.fBlocks.length - 1);
    this.pushI(this.nf);
    writeRecord(R, box, this.i, this.ni, this.f, this.nf, ni, nf);
    this.ni += ni;
    this.nf += nf;
    return index;
  }

  /**
   * Add the record at `at` of a `PackedRegions` (what `RegionBatch` wrote in another thread: the
   * numbers `add` would have stored for that region and box); its index. `get` gives back the
   * region and box that were packed.
   */
  addPacked(p: PackedRegions, at: PackedCursor): number {
    const index = this.starts.length;
    const ni = p.ints[at.i];
    const nf = p.ints[at.i + 1];
    this.reserve(nf, ni + 2);
    this.starts.push((this.iBlocks.length - 1) * 2 ** 26 + this.ni);
    this.pushI(this.fBlocks.length - 1);
    this.pushI(this.nf);
    this.i.set(p.ints.subarray(at.i + 2, at.i + 2 + ni), this.ni);
    this.f.set(p.floats.subarray(at.f, at.f + nf), this.nf);
    this.ni += ni;
    this.nf += nf;
    return index;
  }

  /**
   * Keep the text of the k-th region rendered ahead (`renderRegion` of what `get(k)` gives): `get`
   * attaches it to the region (`REGION_TEXT`), so a table writer need not render it again.
   */
  setText(k: number, text: RegionText | null): void {
    if (text && this.starts[k] >= 0) this.texts[k] = text;
  }

  /**
   * The k-th region and its box, as new objects (keys in the order they were given; the text set by
   * `setText` attached as `REGION_TEXT`). With `shed`, a region whose text is set gets shared empty
   * placeholders (`SHED_LAW`, `SHED_MOVES`, `SHED_VALUE`) for its law, moves and value instead of
   * arrays unpacked: for a caller that only writes the region through `regionJson`, which takes
   * them from the text (the canonical form reads A, b, facets and the Chebyshev ball only).
   */
  get(k: number, shed = false): { region: CriticalRegion; box: StoredBox } {
    const s = this.starts[k];
    if (s < 0) return this.objects[-1 - s];
    const I = this.iBlocks[Math.floor(s / 2 ** 26)];
    let p = s % 2 ** 26;
    const F = this.fBlocks[I[p++]];
    let q = I[p++];
    const id = I[p++];
    const nt = I[p++];
    const m = I[p++];
    const full = I[p++] === 1;
    const k0 = I[p++];
    // plain loops, not Array.from of a subarray (the iterator path: it took most of the unpacking,
    // 0.6 s of the main thread's serial tail for 7 843 regions of boom-4d-n12)
    const ints = (n: number): number[] => {
      const out: number[] = [];
      for (let e = p + n; p < e; p++) out.push(I[p]);
      return out;
    };
    const activeSet = ints(k0);
    const facets: FacetInfo[] = [];
    for (let r = 0; r < m; r++) {
      const kind = KINDS[I[p++]];
      const row = I[p++];
      const c = I[p++];
      facets.push({ kind, row, neighbours: ints(c) });
    }
    const lawRows = I[p++];
    const movesRows = full ? I[p++] : 0;
    const vec = (n: number): number[] => {
      const out: number[] = [];
      for (let e = q + n; q < e; q++) out.push(F[q]);
      return out;
    };
    const mat = (rows: number): number[][] => Array.from({ length: rows }, () => vec(nt));
    const A = mat(m);
    const b = vec(m);
    const center = vec(nt);
    const radius = F[q++];
    const text = this.texts[k];
    if (shed && text) {
      // the law, moves and value are in the text: skipped (their doubles, as `recordSizes` counts them)
      const region: CriticalRegion = { id, activeSet, A, b, facets, chebyshev: { center, radius }, law: SHED_LAW };
      q += lawRows * (nt + 1);
      if (full) {
        region.moves = SHED_MOVES;
        region.value = SHED_VALUE;
        q += movesRows * (nt + 1) + nt * nt + nt + 1;
      }
      const lo = vec(nt);
      const hi = vec(nt);
      (region as RegionWithText)[REGION_TEXT] = text;
      return { region, box: { lo, hi } };
    }
    const law = { F: mat(lawRows), g: vec(lawRows) };
    const region: CriticalRegion = { id, activeSet, A, b, facets, chebyshev: { center, radius }, law };
    if (full) {
      region.moves = { F: mat(movesRows), g: vec(movesRows) };
      const Q = mat(nt);
      const qv = vec(nt);
      region.value = { Q, q: qv, r: F[q++] };
    }
    const lo = vec(nt);
    const hi = vec(nt);
    if (text) (region as RegionWithText)[REGION_TEXT] = text;
    return { region, box: { lo, hi } };
  }
}

/**
 * A region's JSON text rendered ahead, in two pieces: `body` the members `"A":…,"b":…` and `tail`
 * the members from `"chebyshev"` to the last (law, and moves and value in a full table), each as
 * `JSON.stringify` of the whole region writes them. The members a canonical form changes (id,
 * activeSet's position, the facets' neighbours) are not in it. Rendering on the main thread while
 * the workers explore takes this work out of the serial tail after the exploration (`tableChunks`
 * joins the pieces).
 */
export interface RegionText {
  body: string;
  tail: string;
}

/**
 * The symbol under which a region carries its `RegionText` (an own enumerable property: object
 * spread copies it, `JSON.stringify` and `Object.keys` skip it).
 */
export const REGION_TEXT: unique symbol = Symbol('tessera.regionText');

/** What `RegionStore.get(k, true)` puts in place of the law, moves and value of a region whose text is set (frozen, shared: never read for numbers). */
export const SHED_LAW: CriticalRegion['law'] = Object.freeze({ F: Object.freeze([]) as unknown as number[][], g: Object.freeze([]) as unknown as number[] });
export const SHED_MOVES: NonNullable<CriticalRegion['moves']> = SHED_LAW;
export const SHED_VALUE: NonNullable<CriticalRegion['value']> = Object.freeze({ Q: Object.freeze([]) as unknown as number[][], q: Object.freeze([]) as unknown as number[], r: 0 });

/** A region that may carry its text rendered ahead. */
export type RegionWithText = CriticalRegion & { [REGION_TEXT]?: RegionText };

/** The `RegionText` of a region with the keys of a lean or full table in order, else null. */
export function renderRegion(R: CriticalRegion): RegionText | null {
  const keys = Object.keys(R).join(',');
  const full = keys === FULL_KEYS;
  if (!full && keys !== LEAN_KEYS) return null;
  const body = `"A":${JSON.stringify(R.A)},"b":${JSON.stringify(R.b)}`;
  let tail = `"chebyshev":${JSON.stringify(R.chebyshev)},"law":${JSON.stringify(R.law)}`;
  if (full) tail += `,"moves":${JSON.stringify(R.moves)},"value":${JSON.stringify(R.value)}`;
  return { body, tail };
}

/**
 * The JSON text of a region (what `JSON.stringify(R)` gives), from its `REGION_TEXT` when it
 * carries one and still has the keys of a lean or full table in order, else by `JSON.stringify`.
 */
export function regionJson(R: RegionWithText): string {
  const t = R[REGION_TEXT];
  if (t) {
    const keys = Object.keys(R).join(',');
    if (keys === FULL_KEYS || keys === LEAN_KEYS) return `{"id":${JSON.stringify(R.id)},"activeSet":${JSON.stringify(R.activeSet)},${t.body},"facets":${JSON.stringify(R.facets)},${t.tail}}`;
  }
  return JSON.stringify(R);
}

/** Numbers of a region's record (without the store's two leading integers): `ni` integers, `nf` doubles. */
function recordSizes(R: CriticalRegion, box: StoredBox): { ni: number; nf: number } {
  const nt = box.lo.length;
  const m = R.b.length;
  const full = R.moves !== undefined;
  const lawRows = R.law.g.length;
  const P = full ? packedTail(R) : undefined;
  const movesRows = !full ? 0 : P ? packedNz(P.length, nt) : R.moves!.g.length;
  let ni = 6 + R.activeSet.length + (full ? 1 : 0);
  for (const fi of R.facets) ni += 3 + fi.neighbours.length;
  const nf = (m + 1) * (nt + 1) + (lawRows + movesRows) * (nt + 1) + (full ? nt * nt + nt + 1 : 0) + 2 * nt;
  return { ni, nf };
}

/**
 * Write a packable region's record at I[ip …] and F[fp …] (room for `recordSizes` checked by the
 * caller): integers id, nt, m, full, |activeSet|, activeSet, per facet (kind, row, count,
 * neighbours), law rows, moves rows; doubles A, b, centre, radius, law (F, g), moves (F, g), value
 * (Q, q, r), box (lo, hi).
 */
function writeRecord(R: CriticalRegion, box: StoredBox, I: Int32Array, ip: number, F: Float64Array, fp: number, ni: number, nf: number): void {
  const i0 = ip;
  const f0 = fp;
  const nt = box.lo.length;
  const full = R.moves !== undefined;
  I[ip++] = R.id;
  I[ip++] = nt;
  I[ip++] = R.b.length;
  I[ip++] = full ? 1 : 0;
  I[ip++] = R.activeSet.length;
  for (const a of R.activeSet) I[ip++] = a;
  for (const fi of R.facets) {
    I[ip++] = KIND_CODE[fi.kind];
    I[ip++] = fi.row;
    I[ip++] = fi.neighbours.length;
    for (const n of fi.neighbours) I[ip++] = n;
  }
  I[ip++] = R.law.g.length;
  const P = full ? packedTail(R) : undefined;
  if (full) I[ip++] = P ? packedNz(P.length, nt) : R.moves!.g.length;
  for (const a of R.A) for (const v of a) F[fp++] = v;
  for (const v of R.b) F[fp++] = v;
  for (const v of R.chebyshev.center) F[fp++] = v;
  F[fp++] = R.chebyshev.radius;
  for (const r of R.law.F) for (const v of r) F[fp++] = v;
  for (const v of R.law.g) F[fp++] = v;
  if (P) {
    // moves F, g and value Q, q, r: the record's order
    F.set(P, fp);
    fp += P.length;
  } else if (full) {
    for (const r of R.moves!.F) for (const v of r) F[fp++] = v;
    for (const v of R.moves!.g) F[fp++] = v;
    const V = R.value!;
    for (const r of V.Q) for (const v of r) F[fp++] = v;
    for (const v of V.q) F[fp++] = v;
    F[fp++] = V.r;
  }
  for (const v of box.lo) F[fp++] = v;
  for (const v of box.hi) F[fp++] = v;
  // a write past a typed array's end is dropped silently: the sizes reserved must be the sizes written
  if (ip - i0 !== ni || fp - f0 !== nf || ip > I.length || fp > F.length) throw new Error(`RegionStore: record of ${ni}/${nf} numbers reserved, ${ip - i0}/${fp - f0} written`);
}

/**
 * Region records packed in one thread for a `RegionStore` in another (a worker's batch of found
 * regions, sent with its buffers transferred instead of the regions cloned as objects): per record,
 * its integer and double counts, then the record `RegionStore.add` stores.
 */
export interface PackedRegions {
  ints: Int32Array;
  floats: Float64Array;
}

/** Where the next record of a `PackedRegions` starts; `skipPacked` moves it past one. */
export interface PackedCursor {
  i: number;
  f: number;
}

/** Move `at` past the record it is on. */
export function skipPacked(p: PackedRegions, at: PackedCursor): void {
  const ni = p.ints[at.i];
  const nf = p.ints[at.i + 1];
  at.i += 2 + ni;
  at.f += nf;
}

/** Records of regions being packed for another thread (`PackedRegions`), grown on demand. */
export class RegionBatch {
  private I = new Int32Array(1 << 12);
  private F = new Float64Array(1 << 14);
  private ni = 0;
  private nf = 0;

  /** Pack a region and its box; false (nothing written) when `RegionStore` could not pack it. */
  push(R: CriticalRegion, box: StoredBox): boolean {
    if (!RegionStore.packable(R, box)) return false;
    const { ni, nf } = recordSizes(R, box);
    if (this.ni + ni + 2 > this.I.length) {
      const g = new Int32Array(2 * (this.ni + ni + 2));
      g.set(this.I.subarray(0, this.ni));
      this.I = g;
    }
    if (this.nf + nf > this.F.length) {
      const g = new Float64Array(2 * (this.nf + nf));
      g.set(this.F.subarray(0, this.nf));
      this.F = g;
    }
    this.I[this.ni++] = ni;
    this.I[this.ni++] = nf;
    writeRecord(R, box, this.I, this.ni, this.F, this.nf, ni, nf);
    this.ni += ni;
    this.nf += nf;
    return true;
  }

  /** The records packed since the last `take`, in new arrays of their own (to transfer), or null when none. */
  take(): PackedRegions | null {
    if (this.ni === 0) return null;
    const out = { ints: this.I.slice(0, this.ni), floats: this.F.slice(0, this.nf) };
    this.ni = 0;
    this.nf = 0;
    return out;
  }
}
