/**
 * C99 code generation from a table: one header and one source file, const arrays only (they go to
 * flash), no dynamic memory, no recursion, no libm, fixed-width index types, bounded loops, static
 * internals and a single public function NAME_eval. Numbers are printed with 17 significant
 * digits, so the double build reproduces the TypeScript evaluator bit for bit; the float build
 * prints the float nearest to each double (suffix f), which is what evaluateArrays rounds to.
 * Every a·θ is summed from its first product rather than from 0: the two can differ only in the
 * sign of a zero sum, which no comparison distinguishes (IEEE 754, common practice), and it takes
 * one addition off the dependency chain of each test.
 */
import type { TableFile } from '../../table/format.js';
import { buildArrays, costFigures, evaluateArrays, PLANE_DESCENT_LEVELS, type EmitArrays, type Precision } from '../arrays.js';
import type { ArrayBytes, EmitMeta, EmitTarget } from './target.js';
import { layoutOf, type LayoutArray, type LayoutValue } from '../layout.js';

/** C element type of an index array: the narrowest fixed-width type that holds every entry. */
export function indexType(range: [number, number], signed: boolean): 'int16_t' | 'int32_t' | 'uint16_t' | 'uint32_t' {
  const [lo, hi] = [Math.min(0, range[0]), Math.max(0, range[1])];
  if (signed) return lo >= -32768 && hi <= 32767 ? 'int16_t' : 'int32_t';
  return hi <= 65535 ? 'uint16_t' : 'uint32_t';
}

/** Bytes of the C element types used here (C99 <stdint.h> widths, IEEE 754 binary32/64). */
export const C_TYPE_BYTES: Record<string, number> = { float: 4, double: 8, int16_t: 2, int32_t: 4, int64_t: 8, uint16_t: 2, uint32_t: 4 };

export interface CArray {
  name: string;
  ctype: string;
  values: LayoutValue[];
  real: boolean;
}

/** C type of each kind of the layout; node children share one type (the root reference included). */
export function cElementType(a: LayoutArray, layout: LayoutArray[], precision: Precision, root: number): string {
  switch (a.kind) {
    case 'f-real':
      return precision;
    case 'i-index': {
      const refs = layout.filter((x) => x.kind === 'i-index');
      return indexType([Math.min(root, ...refs.map((x) => Number(x.range[0]))), Math.max(root, ...refs.map((x) => Number(x.range[1])))], true);
    }
    case 'u-index':
    case 'u-count':
      return indexType([Number(a.range[0]), Number(a.range[1])], false);
    case 'q-fixed':
      return `int${a.fixed!.bits}_t`;
  }
}

/**
 * The arrays the C declares, in order. C rules applied here, not in the layout: C forbids empty
 * arrays (an empty one gets one zero), and a one-region tree's node arrays are left out (an unused
 * static const would not compile with -Werror).
 */
export function cArrays(ar: EmitArrays): CArray[] {
  return cDeclared(layoutOf(ar), ar.precision, ar.search !== 'sequential' && ar.nodeLeft.length === 0, ar.root);
}

/** The C rules on a layout: element types, one-leaf trees without node arrays, no empty arrays. */
export function cDeclared(layout: LayoutArray[], precision: Precision, noNodes: boolean, root: number): CArray[] {
  return layout
    .filter((a) => !(noNodes && a.name.startsWith('node_')))
    .map((a) => ({ name: a.name, ctype: cElementType(a, layout, precision, root), values: a.values.length > 0 ? a.values : [0], real: a.kind === 'f-real' }));
}


/** Bytes of every declared array and the total, as gcc's sizeof gives them. */
export function cArrayBytes(arrays: { name: string; ctype: string; values: unknown[] }[]): { arrays: ArrayBytes[]; total: number } {
  const out = arrays.map((s) => ({ name: s.name, type: s.ctype, count: s.values.length, bytes: s.values.length * C_TYPE_BYTES[s.ctype] }));
  return { arrays: out, total: out.reduce((s, a) => s + a.bytes, 0) };
}

/** The C target's memory report of a float/double build: the same arrays in both precisions. */
export function cCost(ar: EmitArrays): Record<Precision, { arrays: ArrayBytes[]; total: number }> {
  return { float: cArrayBytes(cArrays({ ...ar, precision: 'float' })), double: cArrayBytes(cArrays({ ...ar, precision: 'double' })) };
}


/** A valid C identifier for the prefix, or an explanation why not. */
export function checkPrefix(prefix: string): string | null {
  if (!/^[A-Za-z_][A-Za-z0-9_]*$/.test(prefix)) return 'must be a C identifier (letters, digits, underscore; not starting with a digit)';
  if (prefix.length > 31) return 'must be at most 31 characters (C99 external identifier limit)';
  return null;
}

/** Text safe inside a C block comment. */
export function commentText(s: string): string {
  return s.replace(/\*\//g, '* /').replace(/[^\x20-\x7e]/g, '?');
}

/** An integer literal; int64_t ones carry INT64_C (C99 <stdint.h>) so that they are 64-bit on every target, and the most negative value of a type is written as (−max − 1). */
export function cInteger(v: LayoutValue, ctype: string): string {
  const x = BigInt(v);
  if (ctype === 'int64_t') return x === -(1n << 63n) ? '(-INT64_C(9223372036854775807) - 1)' : `INT64_C(${x})`;
  if (ctype === 'int32_t' && x === -(1n << 31n)) return '(-2147483647 - 1)';
  return String(x);
}

export function formatReal(v: number, precision: 'float' | 'double'): string {
  if (!Number.isFinite(v)) throw new Error(`cannot emit non-finite number ${v}`);
  const s = v.toPrecision(17);
  return precision === 'float' ? s + 'f' : s;
}

export function arrayBlock(prefix: string, name: string, ctype: string, values: LayoutValue[], real: 'float' | 'double' | null): string {
  const items = values.map((v) => (real ? formatReal(Number(v), real) : cInteger(v, ctype)));
  const perLine = real ? 4 : 12;
  const lines: string[] = [];
  for (let i = 0; i < items.length; i += perLine) lines.push('    ' + items.slice(i, i + perLine).join(', '));
  return `static const ${ctype} ${prefix}_${name}[${values.length}] = {\n${lines.join(',\n')}\n};\n`;
}

const BLOCK_TEXT: Record<string, string> = {
  state: 'measured (or estimated) state x(0)',
  inputPrev: 'input applied at the previous step, u(-1)',
  reference: 'reference r of the tracked outputs, held over the horizon',
  disturbance: 'disturbance d, held constant over the horizon',
  parameter: 'parameters of the mpQP',
};

/** θ documented block by block from the table's layout, then the law's entries. */
export function limitsText(t: TableFile): string[] {
  const out: string[] = [];
  const blocks = t.layout?.theta ?? [{ kind: 'parameter', offset: 0, size: t.thetaNames.length }];
  for (const b of blocks) {
    const span = b.size === 1 ? `theta[${b.offset}]` : `theta[${b.offset}..${b.offset + b.size - 1}]`;
    out.push(` *   ${span}: ${BLOCK_TEXT[b.kind] ?? b.kind}`);
    for (let j = b.offset; j < b.offset + b.size; j++) out.push(` *     theta[${j}] = ${commentText(t.thetaNames[j])}, box [${t.box.lower[j]}, ${t.box.upper[j]}]`);
  }
  const direct = t.layout?.formulation === 'mpqp';
  if (direct) out.push(` *   u[0..${t.inputNames.length - 1}]: the first ${t.inputNames.length} entries of the mpQP decision vector z`);
  t.inputNames.forEach((nm, j) => {
    const lo = t.inputLimits?.lower?.[j];
    const hi = t.inputLimits?.upper?.[j];
    out.push(` *   u[${j}] = ${commentText(nm)}${direct ? '' : `, limits [${lo ?? '-inf'}, ${hi ?? '+inf'}]`}`);
  });
  return out;
}

/** The header's account of the point-location structure: which one, and why (from the cost model). */
function searchText(ar: EmitArrays, meta: EmitMeta): string {
  const lines = meta.searchReason ? meta.searchReason : [`${ar.search} search, named on the command line.`];
  return lines.map((l) => ` * ${commentText(l)}`).join('\n');
}

export function emitHeader(ar: EmitArrays, meta: EmitMeta): string {
  const P = meta.prefix;
  const real = ar.precision;
  const t = meta.table;
  const incomplete = t.stats && t.stats.complete === false;
  const guard = `${P.toUpperCase()}_H`;
  return `/*
 * ${P}.h - explicit MPC law generated by tessera emit (C99, ${real}, ${ar.search} search).
 * Table "${commentText(t.name)}", hash ${meta.tableHash}
 * ${ar.regionCount} critical regions${meta.mergedFrom !== undefined ? ` (merged from ${meta.mergedFrom})` : ''}, ${ar.ntheta} parameters, ${ar.nu} inputs.${incomplete ? `\n * INCOMPLETE TABLE: the exploration stopped early (${t.stats.stopReason}); parts of the feasible set have no region.` : ''}
 *
 * Parameter vector and outputs (order matters):
${limitsText(t).join('\n')}
 *
 * Point location:
${searchText(ar, meta)}
 *
 * CAUTIONS - this code drives equipment that can hurt people:
 *  - Validate the controller in simulation and hardware-in-the-loop on the target before use.
 *  - Keep an independent safety layer (limits, watchdog, interlocks) outside this code.
 *  - ${ar.clamp ? `u is saturated to the input limits listed above (emit --clamp).` : `u is the affine law as computed: it meets the input limits only up to rounding (emit --clamp saturates).`}
 *  - ${P}_eval returns -1 when theta lies in no region (outside the box, infeasible, or a gap);
 *    u is then left untouched and the caller must apply its own safe fallback.
 *  - The float build is only as good as its single-precision certificate (tessera emit --certify);
 *    compile with -ffp-contract=off (no fused multiply-add) to reproduce the certified arithmetic.
 *  - Defer to the applicable codes and licensed engineering practice for your application.
 *
 * Use:
 *     ${real} theta[${P.toUpperCase()}_NT], u[${P.toUpperCase()}_NU];
 *     ... fill theta ...
 *     if (${P}_eval(theta, u) < 0) {
 *         hold the last safe input or switch to the backup controller
 *     }
 */
#ifndef ${guard}
#define ${guard}

#include <stdint.h>

#define ${P.toUpperCase()}_NT ${ar.ntheta}
#define ${P.toUpperCase()}_NU ${ar.nu}
#define ${P.toUpperCase()}_REGIONS ${ar.regionCount}
#define ${P.toUpperCase()}_TABLE_HASH "${meta.tableHash}"

#ifdef __cplusplus
extern "C" {
#endif

/* Evaluate the law at theta: writes u and returns the region index (0-based), or returns -1 and
 * leaves u untouched when theta is in no region. Bounded loops (worst case in the cost report),
 * no allocation, no global state: reentrant. */
int ${P}_eval(const ${real} theta[${P.toUpperCase()}_NT], ${real} u[${P.toUpperCase()}_NU]);

#ifdef __cplusplus
}
#endif

#endif /* ${guard} */
`;
}

/** `emit --clamp`: saturation of u to the input limits, one statement per finite bound (no libm). */
function clampBlock(ar: EmitArrays): string {
  if (!ar.clamp) return '';
  const lines: string[] = [];
  ar.clamp.lower.forEach((lo, i) => {
    if (lo !== null) lines.push(`    if (u[${i}] < ${formatReal(lo, ar.precision)}) { u[${i}] = ${formatReal(lo, ar.precision)}; }`);
    const hi = ar.clamp!.upper[i];
    if (hi !== null) lines.push(`    if (u[${i}] > ${formatReal(hi, ar.precision)}) { u[${i}] = ${formatReal(hi, ar.precision)}; }`);
  });
  return lines.length ? `    /* --clamp: saturate to the input limits (a law meets them only up to rounding) */\n${lines.join('\n')}\n` : '';
}

/**
 * Largest θ dimension whose sums are written out term by term (straight-line code, no loop
 * counter); beyond it the generated code keeps the loop. Either way the sum is taken from its first
 * product left to right, so the arithmetic (and every rounding) is the same.
 */
export const UNROLL_MAX = 12;

/** Levels of a hyperplane tree's descent taken per pass of the generated loop (see emitSource). */
export const DESCENT_LEVELS = PLANE_DESCENT_LEVELS;

/** `term(0) + term(1) + …` (C's + is left-associative: the loop's order of additions). */
export function unrolledSum(n: number, term: (j: number) => string, first?: string): string {
  const parts = Array.from({ length: n }, (_, j) => term(j));
  return first !== undefined ? [first, ...parts].join(' + ') : parts.join(' + ');
}

export function emitSource(ar: EmitArrays, meta: EmitMeta): string {
  const P = meta.prefix;
  const NT = `${P.toUpperCase()}_NT`;
  const NU = `${P.toUpperCase()}_NU`;
  const real = ar.precision;
  const blocks = cArrays(ar).map((s) => arrayBlock(P, s.name, s.ctype, s.values, s.real ? real : null));
  const n = ar.ntheta;
  const unroll = n <= UNROLL_MAX;
  // a·x summed from its first product, written out term by term for small nθ (P_dot's loop otherwise)
  const dot = (a: string, x: string) => (unroll ? unrolledSum(n, (j) => `${a}[${j}] * ${x}[${j}]`) : `${P}_dot(${a}, ${x})`);
  const dotHelper = unroll
    ? ''
    : `static ${real} ${P}_dot(const ${real} *a, const ${real} *x)
{
    uint32_t j;
    ${real} s = a[0] * x[0];
    for (j = 1u; j < ${NT}; ++j) {
        s += a[j] * x[j];
    }
    return s;
}

`;
  // t[j] = expr(j) for every j, written out for small nθ
  const fill = (ind: string, t: string, expr: (j: string) => string) =>
    unroll ? Array.from({ length: n }, (_, j) => `${ind}${t}[${j}] = ${expr(String(j))};`).join('\n') : `${ind}for (j = 0u; j < ${NT}; ++j) {\n${ind}    ${t}[j] = ${expr('j')};\n${ind}}`;
  const inside = (ar.bestFit ? '' : `static int ${P}_inside(uint32_t r, const ${real} theta[${NT}])
{
    uint32_t i;
    const uint32_t end = ${P}_region_row_start[r + 1u];
    for (i = ${P}_region_row_start[r]; i < end; ++i) {
        const ${real} *a = &${P}_region_a[i * (uint32_t)${NT}];
        if (!(${dot('a', 'theta')} <= ${P}_region_b[i])) { /* also rejects NaN */
            return 0;
        }
    }
    return 1;
}

`) + `${ar.bestFit ? `/* best fit: writes the largest residual a.(theta - c) - b of region r (without slack) and returns 1
 * when every row holds within the region's slack, else returns 0 */
/* early exit of the best fit: a residual at or below this lies deeper inside its region than the
 * rounding of any other region's test reaches (-2 x the largest slack), so that region is the best fit */
#define ${P.toUpperCase()}_FIT_SURE (${formatReal(ar.fitSure, ar.precision)})

static int ${P}_fit(uint32_t r, const ${real} theta[${NT}], ${real} *res)
{
    uint32_t i${unroll ? '' : ', j'};
    const ${real} slack = ${P}_region_slack[r];
    const ${real} *c = &${P}_law_c[r * (uint32_t)${NT}];
    const uint32_t first = ${P}_region_row_start[r];
    const uint32_t end = ${P}_region_row_start[r + 1u];
    ${real} worst = (${real})0;
    ${real} t[${NT}];
    /* rows are tested around the region's centre: a.(theta - c) - (b - a.c) <= slack */
${fill('    ', 't', (j) => `theta[${j}] - c[${j}]`)}
    for (i = first; i < end; ++i) {
        const ${real} *a = &${P}_region_a[i * (uint32_t)${NT}];
        const ${real} d = ${unroll && n > 1 ? `(${dot('a', 't')})` : dot('a', 't')} - ${P}_region_b[i];
        if (!(d <= slack)) { /* also rejects NaN */
            return 0;
        }
        if (i == first || d > worst) {
            worst = d;
        }
    }
    *res = worst;
    return 1;
}

` : ''}static void ${P}_law(uint32_t r, const ${real} theta[${NT}], ${real} u[${NU}])
{
    uint32_t i${unroll ? '' : ', j'};
${
  ar.lawC.length > 0
    ? `    const ${real} *c = &${P}_law_c[r * (uint32_t)${NT}];
    ${real} t[${NT}];
${fill('    ', 't', (j) => `theta[${j}] - c[${j}]`)}
`
    : ''
}    for (i = 0u; i < ${NU}; ++i) {
        const uint32_t row = r * (uint32_t)${NU} + i;
        const ${real} *f = &${P}_law_f[row * (uint32_t)${NT}];
${
  unroll
    ? `        u[i] = ${unrolledSum(n, (j) => `f[${j}] * ${ar.lawC.length > 0 ? 't' : 'theta'}[${j}]`, `${P}_law_g[row]`)};`
    : `        ${real} s = ${P}_law_g[row];
        for (j = 0u; j < ${NT}; ++j) {
            s += f[j] * ${ar.lawC.length > 0 ? 't' : 'theta'}[j];
        }
        u[i] = s;`
}
    }
${clampBlock(ar)}}
`;
  // best fit: every candidate tested, the smallest largest residual wins, ties to the lowest region
  // index (so the answer does not depend on the order of the candidates)
  const bestLoop = (ind: string, from: string, to: string, region: string) => `${ind}for (k = ${from}; k < ${to}; ++k) {
${ind}    uint32_t r = ${region};
${ind}    ${real} res;
${ind}    if (${P}_fit(r, theta, &res) && (best < 0 || res < best_res || (res == best_res && (int32_t)r < best))) {
${ind}        best = (int32_t)r;
${ind}        best_res = res;
${ind}        if (res <= ${P.toUpperCase()}_FIT_SURE) {
${ind}            break; /* deep inside r: no other region can fit better (see ${P.toUpperCase()}_FIT_SURE) */
${ind}        }
${ind}    }
${ind}}
${ind}if (best < 0) {
${ind}    return -1;
${ind}}
${ind}${P}_law((uint32_t)best, theta, u);
${ind}return (int)best;
`;
  const evalSeq = ar.bestFit
    ? `int ${P}_eval(const ${real} theta[${NT}], ${real} u[${NU}])
{
    uint32_t k;
    int32_t best = -1;
    ${real} best_res = (${real})0;
${bestLoop('    ', '0u', `${P.toUpperCase()}_REGIONS`, 'k')}}
`
    : `int ${P}_eval(const ${real} theta[${NT}], ${real} u[${NU}])
{
    uint32_t r;
    for (r = 0u; r < ${P.toUpperCase()}_REGIONS; ++r) {
        if (${P}_inside(r, theta)) {
            ${P}_law(r, theta, u);
            return (int)r;
        }
    }
    return -1;
}
`;
  // the plane descent takes DESCENT_LEVELS levels per pass: the planes of the node and of its
  // descendants down to that depth are summed together (independent sums instead of a chain), then one
  // of the nodes DESCENT_LEVELS below is taken by index; a node on the way that is a leaf is taken as
  // it is (its own plane slot reads node 0, unused). The leaf reached, and every sum that decides it,
  // is the one-level descent's (TypeScript: descend in arrays.ts)
  const L = DESCENT_LEVELS;
  const dl: string[] = [];
  const U = P.toUpperCase();
  // nodes of the pass by path: '' the node itself, then '0' left / '1' right per level
  const paths = (level: number): string[] => (level === 0 ? [''] : paths(level - 1).flatMap((x) => [x + '0', x + '1']));
  dl.push(`        const uint32_t p_ = (uint32_t)ref;`);
  for (let level = 1; level < L; level++)
    for (const x of paths(level)) {
      const up = x.slice(0, -1);
      dl.push(`        const int32_t c_${x} = ${P}_node_${x.endsWith('0') ? 'left' : 'right'}[p_${up}];`);
      dl.push(`        const uint32_t p_${x} = c_${x} >= 0 ? (uint32_t)c_${x} : 0u;`);
    }
  for (let level = 0; level < L; level++)
    for (const x of paths(level)) dl.push(`        const ${real} *a_${x} = &${P}_node_plane[p_${x} * (uint32_t)(${NT} + 1)];`);
  for (let level = 0; level < L; level++) for (const x of paths(level)) dl.push(`        const ${real} s_${x} = ${dot(`a_${x}`, 'theta')};`);
  // the choice, from the deepest level up: k_x[1] the left result, k_x[0] the right one
  for (let level = L - 1; level >= 0; level--)
    for (const x of paths(level)) {
      const child = (side: '0' | '1') => (level === L - 1 ? `${P}_node_${side === '0' ? 'left' : 'right'}[p_${x}]` : `v_${x}${side}`);
      dl.push(`        int32_t k_${x}[2];`);
      dl.push(`        k_${x}[0] = ${child('1')};`);
      dl.push(`        k_${x}[1] = ${child('0')};`);
      if (level === 0) dl.push(`        ref = k_[s_ <= a_[${NT}]]; /* loaded first, then indexed: no branch */`);
      else dl.push(`        const int32_t v_${x} = c_${x} >= 0 ? k_${x}[s_${x} <= a_${x}[${NT}]] : c_${x};`);
    }
  // the head (headArrays in arrays.ts): the top H levels' planes summed side by side from fixed
  // addresses, then H comparisons walk the slots; the loop goes on below depth H
  const H = ar.search === 'boxtree' ? 0 : ar.headLevels;
  const K = 2 ** H - 1;
  const W = K + 1; // slots summed: the K nodes and one unused zero plane (headArrays)
  const headSum = unroll
    ? `            s_[k] = ${unrolledSum(n, (j) => `${P}_node_head_plane[${j === 0 ? '' : `${j * W}u + `}k] * theta[${j}]`)};`
    : `            uint32_t j_;
            ${real} s = ${P}_node_head_plane[k] * theta[0];
            for (j_ = 1u; j_ < ${NT}; ++j_) {
                s += ${P}_node_head_plane[j_ * ${W}u + k] * theta[j_];
            }
            s_[k] = s;`;
  const head =
    H > 0
      ? `    /* head: the planes of the tree's top ${H} levels (${K} slots in heap order, slot k's children 2k + 1
     * left and 2k + 2 right, and an unused zero slot ${K}; stored column by column: coefficient j of slot
     * k at node_head_plane[j*${W} + k], b at j = NT) are summed side by side, each as the descent below
     * sums a node's plane, then ${H} comparisons walk the slots; a leaf above depth ${H} fills its slots
     * with a zero plane and is reached on both sides. The descent goes on from the node (or leaf)
     * below the slot reached */
    {
        ${real} s_[${W}];
        uint32_t h_ = 0u;
        for (k = 0u; k < ${W}u; ++k) {
${headSum}
        }
${Array.from({ length: H }, () => `        h_ = 2u * h_ + 2u - (uint32_t)(s_[h_] <= ${P}_node_head_plane[${n * W}u + h_]);`).join('\n')}
        ref = ${P}_node_head_ref[h_ - ${K}u];
    }
`
      : '';
  const loopNeeded = ar.maxDepth > H;
  const descent = `${head}${
    loopNeeded
      ? `    /* descent: at most DEPTH hyperplane tests on the path, left when a.theta <= b, ${L} levels per
     * pass${H > 0 ? ` below the head's ${H}` : ''}; each node's plane is stored inline (NT coefficients, then b). The planes of the node and
     * of its descendants ${L - 1} level${L > 2 ? 's' : ''} down are summed in the same pass, so a pass waits for one
     * chain of loads and sums instead of ${L}; a node on the way that is a leaf is taken as it is
     * (its plane slot reads node 0, unused) */
    for (d = ${H}u; d < ${U}_DEPTH && ref >= 0; d += ${L}u) {
${dl.join('\n')}
    }
`
      : ''
  }`;
  const boxDescent = `    /* descent: at most DEPTH coordinate tests, left when theta[axis] <= split (no multiplication) */
    for (d = 0u; d < ${P.toUpperCase()}_DEPTH && ref >= 0; ++d) {
        child[0] = ${P}_node_right[ref];
        child[1] = ${P}_node_left[ref];
        ref = child[theta[${P}_node_axis[ref]] <= ${P}_node_split[ref]];
    }
`;
  const box = ar.search === 'boxtree';
  const grid = ar.search === 'grid';
  // grid: the cell per coordinate, written out for small nθ (c_j: 0 below the grid or NaN, the last cell at or above it)
  const cellOf = (j: string) => `        const ${real} q = (theta[${j}] - ${P}_grid_lo[${j}]) * ${P}_grid_scale[${j}];
        uint32_t c;
        if (!(q >= (${real})0)) { /* below the grid, or NaN */
            c = 0u;
        } else if (q >= (${real})${P}_grid_cells[${j}]) {
            c = ${P}_grid_cells[${j}] - 1u;
        } else {
            c = (uint32_t)q; /* 0 <= q < cells: truncation is defined */
        }
        leaf = leaf * ${P}_grid_cells[${j}] + c;`;
  const gridCell = `    /* the cell of theta: one subtraction, one multiplication and two comparisons per coordinate
     * (no descent); each cell lists every region that can hold a theta mapped into it, the rounding
     * of this computation included */
    leaf = 0u;
${unroll ? Array.from({ length: n }, (_, j) => `    {\n${cellOf(String(j))}\n    }`).join('\n') : `    for (j = 0u; j < ${NT}; ++j) {\n${cellOf('j')}\n    }`}
`;
  const evalTree = grid
    ? `int ${P}_eval(const ${real} theta[${NT}], ${real} u[${NU}])
{
    uint32_t ${unroll ? '' : 'j, '}k, leaf;${ar.bestFit ? `\n    int32_t best = -1;\n    ${real} best_res = (${real})0;` : ''}
${gridCell}`
    : `#define ${P.toUpperCase()}_ROOT (${ar.root})
#define ${P.toUpperCase()}_DEPTH ${ar.maxDepth}u

int ${P}_eval(const ${real} theta[${NT}], ${real} u[${NU}])
{
    int32_t ref = ${P.toUpperCase()}_ROOT;
    uint32_t ${ar.maxDepth > (box ? 0 : H) ? 'd, ' : ''}k, leaf;${ar.maxDepth > 0 && box ? '\n    int32_t child[2];' : ''}${ar.bestFit ? `\n    int32_t best = -1;\n    ${real} best_res = (${real})0;` : ''}
${ar.maxDepth > 0 ? (box ? boxDescent : descent) : ''}    if (ref >= 0) {
        return -1;
    }
    leaf = (uint32_t)(-(ref + 1));
`;
  // grid: the cell's first candidate from leaf_first (loaded beside the cell's offsets), then the rest
  const R_ = `${P.toUpperCase()}_REGIONS`;
  const gridScan = `    /* the candidates of the cell in order: leaf_first[leaf] (${R_} when the cell has none), then
     * leaf_region[leaf_start[leaf] .. leaf_start[leaf + 1])${ar.bestFit ? `; above ${R_}, a cell deep inside one region` : ''} */
    {
        uint32_t r = ${P}_leaf_first[leaf];
        const uint32_t end = ${P}_leaf_start[leaf + 1u];
${
  ar.bestFit
    ? `        if (r > ${R_}) {
            /* the cell lies deep inside region r - ${R_} - 1: every theta mapped into it passes each of
             * that region's rows at or below the early exit of best fit, so the scan would take it
             * first and stop (proof: gridSureCells in tessera's src/emit/grid.ts) */
            r -= ${R_} + 1u;
            ${P}_law(r, theta, u);
            return (int)r;
        }
`
    : ''
}        k = ${P}_leaf_start[leaf];
        while (r < ${R_}) {
${
  ar.bestFit
    ? `            ${real} res;
            if (${P}_fit(r, theta, &res) && (best < 0 || res < best_res || (res == best_res && (int32_t)r < best))) {
                best = (int32_t)r;
                best_res = res;
                if (res <= ${P.toUpperCase()}_FIT_SURE) {
                    break; /* deep inside r: no other region can fit better (see ${P.toUpperCase()}_FIT_SURE) */
                }
            }`
    : `            if (${P}_inside(r, theta)) {
                ${P}_law(r, theta, u);
                return (int)r;
            }`
}
            r = k < end ? (uint32_t)${P}_leaf_region[k++] : ${R_};
        }
    }
${
  ar.bestFit
    ? `    if (best < 0) {
        return -1;
    }
    ${P}_law((uint32_t)best, theta, u);
    return (int)best;
`
    : `    return -1;
`
}}
`;
  const evalLeaf = grid ? gridScan : `${
  ar.bestFit
    ? `    /* best fit among the candidate regions of the leaf */
${bestLoop('    ', `${P}_leaf_start[leaf]`, `${P}_leaf_start[leaf + 1u]`, `${P}_leaf_region[k]`)}`
    : `    /* final check of the few candidate regions of the leaf */
    for (k = ${P}_leaf_start[leaf]; k < ${P}_leaf_start[leaf + 1u]; ++k) {
        uint32_t r = ${P}_leaf_region[k];
        if (${P}_inside(r, theta)) {
            ${P}_law(r, theta, u);
            return (int)r;
        }
    }
    return -1;
`
}}
`;
  return `/*
 * ${P}.c - generated by tessera emit from table "${commentText(meta.table.name)}" (${meta.tableHash}).
 * Do not edit: regenerate from the table. Region tests use slack ${ar.regionSlack.length > 0 ? `up to ${ar.slack.toPrecision(3)} (per region, region_slack)` : `${ar.slack.toPrecision(3)} on every bound`}.
 * See ${P}.h for the cautions that apply to every use of this code.
 */
#include "${P}.h"

${blocks.join('\n')}
${dotHelper}${inside}
${ar.search === 'sequential' ? evalSeq : evalTree + evalLeaf}`;
}

/**
 * A host self-test program: evaluates the given points and compares with the expected results of
 * the TypeScript evaluator exactly (both precisions: the float arithmetic is reproduced exactly).
 * Prints one line per point ("i region u..."), then "selftest: N points, M mismatches"; exits 1 on any mismatch.
 */
export function emitSelfTest(ar: EmitArrays, prefix: string, points: number[][], expected: { region: number; u: number[] | null }[]): string {
  const P = prefix;
  const real = ar.precision;
  const pts = points.flatMap((p) => p.map((v) => (real === 'float' ? Math.fround(v) : v)));
  const expU = expected.flatMap((e) => (e.u ? e.u : new Array(ar.nu).fill(0)));
  const fmt = real === 'float' ? '%.9g' : '%.17g';
  return `/* ${P}_selftest.c - host self-test generated by tessera emit; not for the target. */
#include <stdio.h>
#include "${P}.h"

#define NPOINTS ${points.length}u

${arrayBlock(P, 'test_theta', real, pts, real)}
${arrayBlock(P, 'test_region', 'int32_t', expected.map((e) => e.region), null)}
${arrayBlock(P, 'test_u', real, expU, real)}
${selfTestMain(P, real, '12345.0', fmt, 'double')}`;
}

/**
 * The main() of every C self-test: evaluates NPOINTS points of P_test_theta, prints "i region u..."
 * per point and the summary line, and counts mismatches against P_test_region/P_test_u (u must stay
 * at the sentinel when no region is found). `uType` is the output element type.
 */
export function selfTestMain(P: string, uType: string, sentinel: string, printFormat: string, printCast: string): string {
  const NT = `${P.toUpperCase()}_NT`;
  const NU = `${P.toUpperCase()}_NU`;
  return `int main(void)
{
    uint32_t i, j;
    unsigned long mismatches = 0ul;
    for (i = 0u; i < NPOINTS; ++i) {
        ${uType} u[${NU}];
        int r;
        for (j = 0u; j < ${NU}; ++j) {
            u[j] = (${uType})${sentinel};
        }
        r = ${P}_eval(&${P}_test_theta[i * (uint32_t)${NT}], u);
        printf("%lu %d", (unsigned long)i, r);
        if (r != ${P}_test_region[i]) {
            ++mismatches;
        }
        for (j = 0u; j < ${NU}; ++j) {
            printf(" ${printFormat}", (${printCast})u[j]);
            if (r >= 0 && u[j] != ${P}_test_u[i * (uint32_t)${NU} + j]) {
                ++mismatches;
            }
            if (r < 0 && u[j] != (${uType})${sentinel}) {
                ++mismatches;
            }
        }
        printf("\\n");
    }
    printf("selftest: %lu points, %lu mismatches\\n", (unsigned long)NPOINTS, mismatches);
    return mismatches > 0ul ? 1 : 0;
}
`;
}

/** C99, IEEE float or double: the target behind `--lang c --precision float|double`. */
export const cTarget: EmitTarget<EmitArrays> = {
  id: 'c',
  lang: 'c',
  precisions: ['float', 'double'],
  summary: 'C99, IEEE float or double arithmetic',
  searches: ['tree', 'capped', 'broad', 'boxtree', 'grid', 'sequential'],
  build: (table, precision, search, tree, options) => buildArrays(table, precision as Precision, search, tree, options?.clamp),
  evaluate: evaluateArrays,
  layout: layoutOf,
  files: (ar, meta) => [
    { name: `${meta.prefix}.h`, text: emitHeader(ar, meta) },
    { name: `${meta.prefix}.c`, text: emitSource(ar, meta) },
  ],
  selfTest: (ar, prefix, points, expected) => ({ name: `${prefix}_selftest.c`, text: emitSelfTest(ar, prefix, points, expected) }),
  cost: (ar) => ({ ...costFigures(ar), bytes: cCost(ar) }),
  checkPrefix,
};
