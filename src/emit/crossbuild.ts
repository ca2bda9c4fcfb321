/**
 * Cross-build report for small cores, from the object code itself: sizes (arm-none-eabi-size -A),
 * undefined symbols (nm: which run-time helpers the code calls) and a worst-case instruction and
 * cycle count of one evaluation from the disassembly (objdump -dr). Pure text in, figures out: the
 * CLI runs the tools (src/cli/target-check.ts).
 *
 * Counting method (a timing schema over the control-flow graph, common practice in static WCET
 * analysis): basic blocks from the branch instructions; natural loops from back edges (the target
 * dominates the source); each loop collapsed, innermost first, into bound × (longest iteration
 * path) + (longest path to an exit); the longest path through what remains. Calls add the callee's
 * own count (libgcc helpers are analysed the same way from libgcc.a). Loop bounds come from the
 * structure of the generated code (region rows, tree depth, leaf size, nθ, nu) and are given per
 * function by the caller; a loop the caller cannot name makes the count unavailable rather than
 * wrong. Every conditional branch is counted as taken (an upper bound on cycles).
 */

export interface Instruction {
  addr: number;
  mnemonic: string;
  operands: string;
  /** branch/call target address or symbol, when the instruction has one */
  target?: number;
  callee?: string;
}

export interface DisassembledFunction {
  name: string;
  start: number;
  instructions: Instruction[];
}

/** Functions of an `objdump -dr --no-show-raw-insn` listing (literal pool words dropped, relocated call targets resolved). */
export function parseObjdump(text: string): DisassembledFunction[] {
  const out: DisassembledFunction[] = [];
  let cur: DisassembledFunction | null = null;
  for (const line of text.split('\n')) {
    const head = /^([0-9a-f]+) <([^>]+)>:$/.exec(line);
    if (head) {
      cur = { name: head[2], start: parseInt(head[1], 16), instructions: [] };
      out.push(cur);
      continue;
    }
    if (!cur) continue;
    const reloc = /^\s+[0-9a-f]+: R_ARM_THM_(?:CALL|JUMP24)\s+(\S+)/.exec(line);
    if (reloc) {
      const last = cur.instructions[cur.instructions.length - 1];
      if (last) last.callee = reloc[1].replace(/[+-]0x[0-9a-f]+$/, '');
      continue;
    }
    const ins = /^\s+([0-9a-f]+):\t(\S+)\s*(.*)$/.exec(line);
    if (!ins) continue;
    const mnemonic = ins[2];
    if (mnemonic.startsWith('.')) continue; // .word/.short: literal pool data
    const operands = ins[3].replace(/\s*@.*$/, '').trim();
    const i: Instruction = { addr: parseInt(ins[1], 16), mnemonic, operands };
    const t = /^(?:[a-z0-9]+,\s*)?([0-9a-f]+) <([^>+]+)(?:\+0x[0-9a-f]+)?>$/.exec(operands);
    if (t) {
      i.target = parseInt(t[1], 16);
      if (/^blx?$/.test(mnemonic)) i.callee = t[2];
    }
    cur.instructions.push(i);
  }
  return out;
}

const COND = '(eq|ne|cs|hs|cc|lo|mi|pl|vs|vc|hi|ls|ge|lt|gt|le)';
const isCondBranch = (m: string) => new RegExp(`^b${COND}(\\.n|\\.w)?$`).test(m) || /^cbn?z$/.test(m);
const isJump = (m: string) => /^b(\.n|\.w)?$/.test(m);
const isCall = (m: string) => /^blx?$/.test(m);
function isReturn(i: Instruction): boolean {
  if (i.mnemonic === 'bx' && i.operands === 'lr') return true;
  if (/^(pop|ldmia)(\.w)?$/.test(i.mnemonic) && /\bpc\b/.test(i.operands)) return true;
  if (/^ldr(\.w)?$/.test(i.mnemonic) && /^pc,/.test(i.operands)) return true;
  return false;
}

/** Cycles per instruction class on one core (ARM technical reference manuals, from memory; see CORES). */
export interface CycleTable {
  core: string;
  flags: string[];
  /** default for an ALU/move/compare instruction */
  alu: number;
  load: number;
  store: number;
  /** push/pop/ldm/stm: base + per register */
  multiBase: number;
  multiPerReg: number;
  mul: number;
  longMul: number;
  /** a taken branch (pipeline refill included); every branch is counted as taken */
  branch: number;
  call: number;
  fpu: number;
  fpuLoad: number;
  notes: string;
}

export const CORES: Record<'cortex-m0' | 'cortex-m4f', CycleTable> = {
  'cortex-m0': {
    core: 'Cortex-M0',
    flags: ['-mcpu=cortex-m0', '-mthumb', '-mfloat-abi=soft'],
    alu: 1,
    load: 2,
    store: 2,
    multiBase: 1,
    multiPerReg: 1,
    mul: 1,
    longMul: 1,
    branch: 3,
    call: 4,
    fpu: 1,
    fpuLoad: 2,
    notes: 'Cortex-M0 TRM instruction timings: ALU 1, LDR/STR 2, PUSH/POP/LDM/STM 1+N, MULS 1 (fast-multiplier option; 32 with the small multiplier), taken branch 3, BL 4 (from memory)',
  },
  'cortex-m4f': {
    core: 'Cortex-M4F',
    flags: ['-mcpu=cortex-m4', '-mthumb', '-mfloat-abi=hard', '-mfpu=fpv4-sp-d16'],
    alu: 1,
    load: 2,
    store: 1,
    multiBase: 1,
    multiPerReg: 1,
    mul: 1,
    longMul: 1,
    branch: 4,
    call: 4,
    fpu: 1,
    fpuLoad: 2,
    notes: 'Cortex-M4 TRM timings: ALU 1, LDR 2, STR 1, PUSH/POP 1+N, MUL/MLA/SMULL/SMLAL 1, taken branch 1+P with P ≤ 3 pipeline refill, FPU VADD/VMUL/VCMP 1, VLDR 2; zero wait-state flash assumed (from memory)',
  },
};

function registerCount(ops: string): number {
  const m = /\{([^}]*)\}/.exec(ops);
  if (!m) return 1;
  let n = 0;
  for (const part of m[1].split(',')) {
    const r = /([a-z]+)(\d+)-[a-z]+(\d+)/.exec(part.trim());
    n += r ? Number(r[3]) - Number(r[2]) + 1 : 1;
  }
  return n;
}

/** Cycles of one instruction on a core (upper estimate: branches taken). */
export function instructionCycles(i: Instruction, c: CycleTable): number {
  const m = i.mnemonic.replace(/\.(n|w)$/, '');
  if (isCall(m)) return c.call;
  if (isCondBranch(i.mnemonic) || isJump(i.mnemonic) || m === 'bx') return c.branch;
  if (/^(push|pop|ldm|stm|vpush|vpop)/.test(m)) return c.multiBase + c.multiPerReg * registerCount(i.operands) + (/\bpc\b/.test(i.operands) ? c.branch - 1 : 0);
  if (/^v(ldr|str|ldm|stm)/.test(m)) return c.fpuLoad;
  if (/^v/.test(m)) return c.fpu;
  if (/^(smull|umull|smlal|umlal)/.test(m)) return c.longMul;
  if (/^(mul|mla|mls)/.test(m)) return c.mul;
  if (/^ldr/.test(m)) return /\bpc\b/.test(i.operands.split(',')[0]) ? c.load + c.branch - 1 : c.load;
  if (/^str/.test(m)) return c.store;
  return c.alu;
}

export interface PathCount {
  instructions: number;
  cycles: number;
  /** calls to each external helper on the counted path (their own counts are included when known) */
  helperCalls: Record<string, number>;
}

/** What the caller knows about a function's loops: one bound per loop, or null when a loop is not expected. */
export interface LoopInfo {
  /** 1 = outermost */
  depth: number;
  /** functions called somewhere inside the loop body */
  calls: string[];
  /** loops nested directly inside */
  children: number;
}
export type LoopBounds = (loop: LoopInfo) => number | null;

interface Block {
  id: number;
  instrs: Instruction[];
  succ: number[];
}

function blocksOf(fn: DisassembledFunction): Block[] {
  const ins = fn.instructions;
  const leaders = new Set<number>([0]);
  const indexOf = new Map(ins.map((x, k) => [x.addr, k]));
  ins.forEach((x, k) => {
    const branch = isCondBranch(x.mnemonic) || isJump(x.mnemonic);
    if (branch && x.target !== undefined && indexOf.has(x.target)) leaders.add(indexOf.get(x.target)!);
    if ((branch || isReturn(x)) && k + 1 < ins.length) leaders.add(k + 1);
  });
  const starts = [...leaders].sort((a, b) => a - b);
  const blockAt = new Map<number, number>();
  const blocks: Block[] = starts.map((s, b) => {
    const e = b + 1 < starts.length ? starts[b + 1] : ins.length;
    blockAt.set(s, b);
    return { id: b, instrs: ins.slice(s, e), succ: [] };
  });
  blocks.forEach((bl, b) => {
    const last = bl.instrs[bl.instrs.length - 1];
    const next = b + 1 < blocks.length ? b + 1 : -1;
    const tgt = last.target !== undefined && indexOf.has(last.target) ? blockAt.get(indexOf.get(last.target)!) : undefined;
    if (isReturn(last)) return;
    if (isJump(last.mnemonic)) {
      if (tgt !== undefined) bl.succ.push(tgt);
      else throw new Error(`${fn.name}: jump out of the function at 0x${last.addr.toString(16)} (tail call not supported)`);
      return;
    }
    if (isCondBranch(last.mnemonic) && tgt !== undefined) bl.succ.push(tgt);
    if (next >= 0) bl.succ.push(next);
  });
  return blocks;
}

function dominators(blocks: Block[]): Set<number>[] {
  const n = blocks.length;
  const pred: number[][] = blocks.map(() => []);
  blocks.forEach((b) => b.succ.forEach((s) => pred[s].push(b.id)));
  const all = new Set(blocks.map((b) => b.id));
  const dom: Set<number>[] = blocks.map((b) => (b.id === 0 ? new Set([0]) : new Set(all)));
  let changed = true;
  while (changed) {
    changed = false;
    for (let b = 1; b < n; b++) {
      let inter: number[] | null = null;
      for (const p of pred[b]) inter = inter === null ? [...dom[p]] : (inter as number[]).filter((x: number) => dom[p].has(x));
      const next = new Set<number>(inter ?? []);
      next.add(b);
      if (next.size !== dom[b].size) {
        dom[b] = next;
        changed = true;
      }
    }
  }
  return dom;
}

interface Loop {
  header: number;
  body: Set<number>;
  parent: number | null;
  children: number[];
  depth: number;
}

/**
 * Worst-case path of a function: instructions and cycles, with callee counts from `calleeCount`
 * (null = unknown helper: counted as the call instruction only and listed in helperCalls).
 */
export function worstPath(fn: DisassembledFunction, bounds: LoopBounds, cycles: CycleTable, calleeCount: (name: string) => PathCount | null): PathCount | { error: string } {
  let blocks: Block[];
  try {
    blocks = blocksOf(fn);
  } catch (e) {
    return { error: (e as Error).message };
  }
  const dom = dominators(blocks);
  const pred: number[][] = blocks.map(() => []);
  blocks.forEach((b) => b.succ.forEach((s) => pred[s].push(b.id)));
  // natural loops, merged per header
  const byHeader = new Map<number, Set<number>>();
  for (const b of blocks)
    for (const s of b.succ)
      if (dom[b.id].has(s)) {
        const body = byHeader.get(s) ?? new Set([s]);
        const stack = [b.id];
        while (stack.length) {
          const x = stack.pop()!;
          if (body.has(x)) continue;
          body.add(x);
          stack.push(...pred[x]);
        }
        byHeader.set(s, body);
      }
  const loops: Loop[] = [...byHeader.entries()].map(([header, body]) => ({ header, body, parent: null, children: [], depth: 1 }));
  loops.sort((a, b) => b.body.size - a.body.size);
  loops.forEach((l, k) => {
    for (let p = k - 1; p >= 0; p--)
      if ([...l.body].every((x) => loops[p].body.has(x))) {
        if (l.parent === null || loops[p].body.size < loops[l.parent].body.size) l.parent = p;
      }
  });
  loops.forEach((l, k) => {
    if (l.parent !== null) loops[l.parent].children.push(k);
  });
  const depthOf = (k: number): number => (loops[k].parent === null ? 1 : 1 + depthOf(loops[k].parent!));
  loops.forEach((l, k) => (l.depth = depthOf(k)));

  const helperCalls: Record<string, number> = {};
  const weight = (b: Block, metric: 'instructions' | 'cycles', calls: Record<string, number> | null): number => {
    let w = 0;
    for (const i of b.instrs) {
      w += metric === 'instructions' ? 1 : instructionCycles(i, cycles);
      if (isCall(i.mnemonic) && i.callee) {
        const c = calleeCount(i.callee);
        if (c) {
          w += c[metric];
          if (calls) for (const [h, n] of Object.entries(c.helperCalls)) calls[h] = (calls[h] ?? 0) + n;
        }
        if (calls) calls[i.callee] = (calls[i.callee] ?? 0) + 1;
      }
    }
    return w;
  };

  const loopBound: number[] = [];
  for (let k = 0; k < loops.length; k++) {
    const calls = new Set<string>();
    for (const b of loops[k].body) for (const i of blocks[b].instrs) if (isCall(i.mnemonic) && i.callee) calls.add(i.callee);
    const bd = bounds({ depth: loops[k].depth, calls: [...calls], children: loops[k].children.length });
    if (bd === null) return { error: `${fn.name}: unexpected loop at 0x${blocks[loops[k].header].instrs[0].addr.toString(16)} (depth ${loops[k].depth}, ${loops[k].children.length} nested)` };
    loopBound.push(bd);
  }

  // innermost loop containing each block
  const inner = blocks.map((b) => {
    let best = -1;
    loops.forEach((l, k) => {
      if (l.body.has(b.id) && (best < 0 || l.body.size < loops[best].body.size)) best = k;
    });
    return best;
  });
  /** the node standing for block b at the level of loop `level` (−1 = function): b or the outermost child loop holding it */
  const nodeAt = (b: number, level: number): string => {
    let k = inner[b];
    if (k === level) return `b${b}`;
    while (k >= 0 && (loops[k].parent ?? -1) !== level) k = loops[k].parent ?? -1;
    return k >= 0 ? `L${k}` : `b${b}`;
  };

  const solve = (metric: 'instructions' | 'cycles', calls: Record<string, number> | null): number | string => {
    const loopCost: number[] = new Array(loops.length).fill(NaN);
    const loopCalls: Record<string, number>[] = loops.map(() => ({}));
    const order = loops.map((_, k) => k).sort((a, b) => loops[b].depth - loops[a].depth);
    // longest path over the nodes of one level, from `source`; `stopAt` edges (back edges) are not followed
    const level = (lv: number, members: Set<number>, source: string, stopHeader: number | null) => {
      const nodes = new Map<string, { w: number; calls: Record<string, number>; succ: Set<string>; exits: boolean; latch: boolean }>();
      for (const b of members) {
        const id = nodeAt(b, lv);
        if (!nodes.has(id)) {
          if (id.startsWith('L')) {
            const k = Number(id.slice(1));
            nodes.set(id, { w: loopCost[k], calls: loopCalls[k], succ: new Set(), exits: false, latch: false });
          } else {
            const c: Record<string, number> = {};
            nodes.set(id, { w: weight(blocks[b], metric, c), calls: c, succ: new Set(), exits: false, latch: false });
          }
        }
        const node = nodes.get(id)!;
        if (blocks[b].succ.length === 0) node.exits = true;
        for (const s of blocks[b].succ) {
          if (!members.has(s)) {
            node.exits = true;
            continue;
          }
          const t = nodeAt(s, lv);
          if (t === id) continue;
          if (stopHeader !== null && s === stopHeader) {
            node.latch = true; // the iteration ends here
            continue;
          }
          node.succ.add(t);
        }
      }
      const memo = new Map<string, { w: number; calls: Record<string, number> } | null>();
      const visiting = new Set<string>();
      // longest path from id to a loop exit or return (toLatch: or to the end of an iteration)
      const walk = (id: string, toLatch: boolean): { w: number; calls: Record<string, number> } | null => {
        const key = id + (toLatch ? '>' : '');
        if (memo.has(key)) return memo.get(key)!;
        if (visiting.has(key)) throw new Error('irreducible or unrecognised cycle');
        visiting.add(key);
        const n = nodes.get(id)!;
        let best: { w: number; calls: Record<string, number> } | null = n.exits || (toLatch && n.latch) ? { w: 0, calls: {} } : null;
        for (const s of n.succ) {
          const r = walk(s, toLatch);
          if (r && (!best || r.w > best.w)) best = r;
        }
        visiting.delete(key);
        const res = best ? { w: best.w + n.w, calls: addCalls(best.calls, n.calls) } : null;
        memo.set(key, res);
        return res;
      };
      return { pass: walk(source, true), exit: walk(source, false) };
    };
    try {
      for (const k of order) {
        const l = loops[k];
        const { pass, exit } = level(k, l.body, `b${l.header}`, l.header);
        if (!pass || !exit) return `${fn.name}: loop without an exit`;
        // at most `bound` full passes, then the last pass out of the loop: an upper bound however the loop is laid out
        loopCost[k] = loopBound[k] * pass.w + exit.w;
        loopCalls[k] = addCalls(scaleCalls(pass.calls, loopBound[k]), exit.calls);
      }
      const r = level(-1, new Set(blocks.map((b) => b.id)), nodeAt(0, -1), null).exit;
      if (!r) return `${fn.name}: no path to a return`;
      if (calls) Object.assign(calls, r.calls);
      return r.w;
    } catch (e) {
      return `${fn.name}: ${(e as Error).message}`;
    }
  };
  const instr = solve('instructions', helperCalls);
  const cyc = solve('cycles', null);
  if (typeof instr === 'string') return { error: instr };
  if (typeof cyc === 'string') return { error: cyc };
  return { instructions: instr, cycles: cyc, helperCalls };
}

function addCalls(a: Record<string, number>, b: Record<string, number>): Record<string, number> {
  const o = { ...a };
  for (const [k, v] of Object.entries(b)) o[k] = (o[k] ?? 0) + v;
  return o;
}
function scaleCalls(a: Record<string, number>, f: number): Record<string, number> {
  const o: Record<string, number> = {};
  for (const [k, v] of Object.entries(a)) o[k] = v * f;
  return o;
}

/** Section sizes from `arm-none-eabi-size -A` of an object: .text and .rodata bytes. */
export function parseSizeA(text: string): { text: number; rodata: number; data: number; bss: number } {
  const get = (name: string) => {
    let s = 0;
    for (const m of text.matchAll(new RegExp(`^\\${name}(?:\\.\\S*)?\\s+(\\d+)`, 'gm'))) s += Number(m[1]);
    return s;
  };
  return { text: get('.text'), rodata: get('.rodata'), data: get('.data'), bss: get('.bss') };
}

/** Undefined symbols of an object (`nm` lines "         U name"). */
export function undefinedSymbols(nmText: string): string[] {
  return [...nmText.matchAll(/^\s+U (\S+)$/gm)].map((m) => m[1]).sort();
}

/** Software floating-point helpers of the ARM run-time ABI (single: __aeabi_f*, double: __aeabi_d*, and the conversions). */
export function softFloatHelpers(symbols: string[]): string[] {
  return symbols.filter((s) => /^__aeabi_(f|d|[iul]+2[fd]|[fd]2)/.test(s) || /^__(add|sub|mul|div|cmp|eq|ne|lt|le|gt|ge|unord)[sd]f\d$/.test(s));
}
