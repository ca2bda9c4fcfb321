/**
 * `tessera audit` end to end through the built CLI (dist/src/cli/main.js): exit codes 0/1/2, every
 * option, and the HTML report in headless Chromium (Debian's /usr/bin/chromium through
 * playwright-core, as test/viz/viewer.test.ts does) with no console error. The cart tables are
 * constructed cases (test/fixtures/audit); the recursive-feasibility verdicts are checked against
 * quadprog and javascript-lp-solver in test/check/audit.test.ts.
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { chromium, type Browser } from 'playwright-core';
import { root, solved } from '../helpers/solved.js';
import { tableToJson, regionContains } from '../../src/table/table.js';
import { evaluatePoints } from '../../src/index.js';
import { qpReference } from '../helpers/reference.js';
import * as math from 'mathjs';
import { exactBig } from '../helpers/exact.js';

const cli = join(root, 'dist', 'src', 'cli', 'main.js');
const dir = mkdtempSync(join(tmpdir(), 'tessera-audit-'));
const shortFile = join(root, 'test', 'fixtures', 'audit', 'cart-short.json');
const longFile = join(root, 'test', 'fixtures', 'audit', 'cart-long.json');
const shortTable = join(dir, 'short.json');
const longTable = join(dir, 'long.json');
const holedTable = join(dir, 'holed.json');
const mpqpTable = join(dir, 'mpqp.json');
const CHROMIUM = '/usr/bin/chromium';

interface Run {
  status: number | null;
  stdout: string;
  stderr: string;
}
async function run(args: string[]): Promise<Run> {
  const r = spawnSync(process.execPath, [cli, 'audit', ...args], { encoding: 'utf8' });
  return { status: r.status, stdout: r.stdout, stderr: r.stderr };
}

const fast = ['--samples', '300'];

beforeAll(() => {
  expect(existsSync(cli), 'build first: npx tsc -p tsconfig.json').toBe(true);
  const long = solved(longFile).table;
  writeFileSync(shortTable, tableToJson(solved(shortFile).table));
  writeFileSync(longTable, tableToJson(long));
  const idx = long.regions.findIndex((r) => regionContains(r, [0, 0]));
  writeFileSync(holedTable, tableToJson({ ...long, regions: long.regions.filter((_, i) => i !== idx) }));
  writeFileSync(mpqpTable, tableToJson({ ...long, layout: { ...long.layout, formulation: 'mpqp', theta: [{ kind: 'parameter', offset: 0, size: 2, names: long.thetaNames, refersTo: [0, 1] }] } }));
}, 120000);

describe('tessera audit', { timeout: 180000 }, () => {
  let browser: Browser | null = null;
  afterAll(async () => {
    await browser?.close();
  });

  it('exit 0 on the recursively feasible table; the HTML opens in Chromium with no console error', async () => {
    const out = join(dir, 'long.html');
    const r = await run([longTable, '-o', out, ...fast]);
    expect(r.status, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/PASS {2}Recursive feasibility \(invariance\): PROVEN recursively feasible/);
    expect(r.stdout).toMatch(/overall: PASS/);
    const html = readFileSync(out, 'utf8');
    expect(html).not.toMatch(/<script|src="http|href="http/);
    expect(html).toMatch(/Safety\./);
    browser = await chromium.launch({
      executablePath: CHROMIUM,
      args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-component-update', '--disable-sync'],
    });
    const page = await browser.newPage({ viewport: { width: 1100, height: 900 } });
    const errors: string[] = [];
    page.on('pageerror', (e) => errors.push(String(e)));
    page.on('console', (m) => m.type() === 'error' && errors.push(m.text()));
    await page.goto('file://' + out);
    expect(await page.locator('#verdicts tr').count()).toBe(8);
    expect(await page.locator('section h2').count()).toBe(7);
    // every figure (a slice map and the closed-loop plot) decodes as an image
    const widths = await page.$$eval('figure img', (imgs) => imgs.map((i) => (i as HTMLImageElement).naturalWidth));
    expect(widths.length).toBe(2);
    widths.forEach((w) => expect(w).toBeGreaterThan(100));
    expect(await page.locator('figcaption').first().textContent()).toMatch(/Method: .* Source: /);
    expect(errors).toEqual([]);
  });

  it('exit 0 on the two-step table with a terminal invariant set, stability then a criterion that passes', async () => {
    const t = join(dir, 'terminal.json');
    writeFileSync(t, tableToJson(solved(join(root, 'test', 'fixtures', 'audit', 'cart-terminal.json')).table));
    const r = await run([t, '--md', ...fast]);
    expect(r.status, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/\| 4\. Recursive feasibility \(invariance\) \| PASS \| PROVEN/);
    expect(r.stdout).toMatch(/\| 5\. Stability evidence \| PASS \|/);
  });

  it('a steep value function whose stored quadratic cancels: J* from the online QP there, stability PASS, and the decrease holds in exact arithmetic', async () => {
    // low-gain-terminal-set.json (our own): a plant whose output answers the input with C·B = −0.019,
    // an output limit, a Riccati terminal weight and the invariant terminal set, so the decrease of
    // J* is a theorem (Mayne, Rawlings, Rao & Scokaert 2000). Where every output limit is active the
    // stored J* = θᵀQθ + qᵀθ + r has Q entries near 6e9 for J* ≈ 36: before the fallback the audit
    // said FAIL at 8 of 5 691 points (worst 6.4e-5 against the tolerance 1e-7), all within that
    // quadratic's own rounding.
    const file = join(root, 'test', 'fixtures', 'audit', 'low-gain-terminal-set.json');
    const { table, mpqp } = solved(file);
    const t = join(dir, 'low-gain.json');
    writeFileSync(t, tableToJson(table));
    const r = await run([t, '--json']);
    expect(r.status, r.stderr).toBe(0);
    const rep = JSON.parse(r.stdout);
    expect(rep.stability.verdict).toBe('PASS');
    expect(rep.stability.data.recomputed).toBeGreaterThan(0);
    expect(rep.stability.data.worst).toBeLessThanOrEqual(1e-7);
    // reference: J* from quadprog's optimiser summed in 60-digit mathjs BigNumber arithmetic (exact
    // conversion of each double), the plant step and the stage cost likewise, at the audit's worst
    // point and at seeded covered points: the decrease J*(θ⁺) − J*(θ) + ℓ ≤ 1e-7 (1 + J*)
    const bn = math.create(math.all, { number: 'BigNumber', precision: 60 });
    const big = (x: number): math.BigNumber => exactBig(x, bn);
    const { nz, ntheta: nt } = mpqp;
    const exactJ = (th: number[]): number => {
      const q = qpReference(mpqp, th);
      expect(q.feasible).toBe(true);
      let J = bn.bignumber(0);
      for (let i = 0; i < nz; i++) {
        let hz = bn.bignumber(0);
        for (let j = 0; j < nz; j++) hz = bn.add(hz, bn.multiply(big(mpqp.H[i * nz + j]), big(q.z[j]))) as math.BigNumber;
        let f = big(mpqp.c[i]);
        for (let j = 0; j < nt; j++) f = bn.add(f, bn.multiply(big(mpqp.F[i * nt + j]), big(th[j]))) as math.BigNumber;
        J = bn.add(J, bn.multiply(big(q.z[i]), bn.add(bn.multiply(bn.bignumber(0.5), hz), f))) as math.BigNumber;
      }
      for (let a = 0; a < nt; a++) for (let b = 0; b < nt; b++) J = bn.add(J, bn.multiply(bn.bignumber(0.5), bn.multiply(big(mpqp.Y[a * nt + b]), bn.multiply(big(th[a]), big(th[b]))))) as math.BigNumber;
      return Number(J);
    };
    const spec = JSON.parse(readFileSync(file, 'utf8'));
    const [[a11, a12], [a21, a22]] = spec.plant.A;
    const [[b1], [b2]] = spec.plant.B;
    const q11 = spec.weights.state[0][0];
    const r11 = spec.weights.input[0][0];
    let s = 5;
    const rnd = (): number => ((s = (s * 16807) % 2147483647), s / 2147483647);
    const pts: number[][] = [rep.stability.data.worstTheta];
    for (let k = 0; k < 150; k++) pts.push([mpqp.box.lower[0] + rnd() * (mpqp.box.upper[0] - mpqp.box.lower[0]), mpqp.box.lower[1] + rnd() * (mpqp.box.upper[1] - mpqp.box.lower[1])]);
    let checked = 0;
    for (const th of pts) {
      const [e] = evaluatePoints(table, [th]);
      if (e.region < 0) continue;
      const u = e.u![0];
      const next = [a11 * th[0] + a12 * th[1] + b1 * u, a21 * th[0] + a22 * th[1] + b2 * u];
      const [en] = evaluatePoints(table, [next]);
      if (en.region < 0) continue;
      const J = exactJ(th);
      // ℓ = xᵀQx + uᵀRu with the problem's weights (state weight diag(q11, 0))
      const dec = (exactJ(next) - J + q11 * th[0] * th[0] + r11 * u * u) / (1 + Math.abs(J));
      expect(dec).toBeLessThanOrEqual(1e-7);
      checked++;
    }
    expect(checked).toBeGreaterThan(50);
  });

  it('exit 1 on the short-horizon table, with a θ witness for the failed check', async () => {
    const out = join(dir, 'short.html');
    const r = await run([shortTable, '-o', out, ...fast]);
    expect(r.status, r.stderr).toBe(1);
    expect(r.stdout).toMatch(/FAIL {2}Recursive feasibility \(invariance\): \d+ region\(s\) can leave .* θ = pos=-?[\d.]+, vel=-?[\d.]+ → θ⁺ = pos=/);
    expect(r.stdout).toMatch(/overall: FAIL/);
    expect(readFileSync(out, 'utf8')).toMatch(/θ witness: pos=/);
  });

  it('exit 1 on a table with one region deleted: coverage names the hole', async () => {
    const r = await run([holedTable, '--md', ...fast]);
    expect(r.status, r.stderr).toBe(1);
    expect(r.stdout).toMatch(/\| 3\. Coverage \| FAIL \| HOLE: feasible θ in no region, e\.g\. pos=/);
    expect(r.stdout).toMatch(/## 3\. Coverage: FAIL/);
  });

  it('--json, --samples, --seed, --steps, --precision (double, q31, q15), --search, --problem', async () => {
    const a = await run([longTable, '--json', '--samples', '200', '--seed', '4', '--steps', '25', '--precision', 'double', '--search', 'sequential', '--problem', longFile]);
    expect(a.status, a.stderr).toBe(0);
    const j = JSON.parse(a.stdout);
    expect(j.agreement.data.samples).toBe(200);
    expect(j.agreement.data.seed).toBe(4);
    expect(j.closedLoop.data.steps).toBe(25);
    expect(j.embedded.data.precision).toBe('double');
    expect(j.embedded.data.search).toBe('sequential');
    expect(j.embedded.data.certificate).toBeNull();
    expect(j.identity.data.problemFileHash).toBe(j.identity.data.problemHash);
    expect(j.invariance.data.lps).toBe(j.invariance.data.regions * j.invariance.data.facets.total);
    // the same seed gives the same report; another seed another sample
    const b = await run([longTable, '--json', '--samples', '200', '--seed', '4', '--steps', '25', '--precision', 'double', '--search', 'sequential', '--problem', longFile]);
    expect(b.stdout).toBe(a.stdout);
    const c = await run([longTable, '--json', '--samples', '200', '--seed', '5', '--steps', '25']);
    expect(JSON.parse(c.stdout).closedLoop.data.starts).not.toEqual(j.closedLoop.data.starts);
    expect(JSON.parse(c.stdout).coverage.data.monteCarlo.seed).toBe(5);
    expect(JSON.parse(c.stdout).embedded.data.certificate.safe).toBe(true);
    // fixed point: q31 and q15 are both certified on this table (q15 lost facet points until its search tree got a
    // side overlap for θ's rounding to 15 bits; the certificate now counts 0 lost at 8 output LSBs)
    const q31 = JSON.parse((await run([longTable, '--json', ...fast, '--precision', 'q31'])).stdout);
    expect(q31.embedded.verdict).toBe('PASS');
    expect(q31.embedded.data.certificate.verdict).toMatch(/^SAFE .* q31 build/);
    const q15 = await run([longTable, '--md', ...fast, '--precision', 'q15']);
    expect(q15.stdout).toMatch(/\| 6\. Embedded build \| PASS \| SAFE .*q15 build/);
    expect(q15.stdout).toMatch(/no point inside a region is lost/);
    // another problem file: identity fails (not the problem the table was built from)
    const d = await run([longTable, '--json', ...fast, '--problem', shortFile]);
    expect(d.status).toBe(1);
    expect(JSON.parse(d.stdout).identity.verdict).toBe('FAIL');
  });

  it('--search takes what emit takes: auto (default, the structure emit picks) and every structure by name', async () => {
    // the default: the same structure as `tessera emit` with its default --search auto on the same table
    const emitDir = join(dir, 'emit-auto');
    const e = spawnSync(process.execPath, [cli, 'emit', longTable, '-o', emitDir, '--report', join(dir, 'emit-auto.json'), '-q'], { encoding: 'utf8' });
    expect(e.status, e.stderr).toBe(0);
    const emitted = JSON.parse(readFileSync(join(dir, 'emit-auto.json'), 'utf8'));
    const d = JSON.parse((await run([longTable, '--json', ...fast])).stdout).embedded;
    expect(d.data.searchRequested).toBe('auto');
    expect(d.data.search).toBe(emitted.search);
    expect(d.data.cost.worstMultiplyAdds).toBe(emitted.cost.worstMultiplyAdds);
    expect(d.verdict).toBe('PASS');
    // each structure by name: built as named, certified in float (the certificate compares the float
    // build with the table's double law, which the agreement check holds against quadprog)
    for (const s of ['capped', 'broad', 'boxtree', 'grid', 'tree', 'sequential']) {
      const r = await run([longTable, '--json', ...fast, '--search', s]);
      expect(r.status, `${s}: ${r.stderr}`).toBe(0);
      const j = JSON.parse(r.stdout).embedded;
      expect(j.data.search).toBe(s);
      expect(j.data.searchRequested).toBe(s);
      expect(j.data.certificate.safe, s).toBe(true);
      expect(j.data.certificate.lost, s).toBe(0);
    }
    const md = await run([longTable, '--md', ...fast, '--search', 'boxtree']);
    expect(md.stdout).toMatch(/float, boxtree search/);
  });

  it('bad input: one line naming file, key and reason, exit 2, no report', async () => {
    const out = join(dir, 'never.html');
    const cases: [string[], RegExp][] = [
      [[longTable], /--output: give -o report\.html/],
      [[longTable, '--json', '--md'], /--json: give at most one of --json and --md/],
      [[longTable, '-o', out, '--precision', 'half'], /--precision: expected float or double or q15 or q31, got "half"/],
      [[longTable, '-o', out, '--search', 'linear'], /--search: expected auto or tree or capped or broad or boxtree or grid or sequential, got "linear"/],
      [[longTable, '-o', out, '--precision', 'q31', '--search', 'boxtree'], /--search: the q31 build prints tree or sequential search, not boxtree/],
      [[longTable, '-o', out, '--samples', '0'], /--samples: expected a positive integer/],
      [[longTable, '-o', out, '--steps', 'x'], /--steps: expected a positive integer/],
      [[longTable, '-o', out, '--seed', '-1'], /--seed: expected a non-negative integer/],
      [[longTable, '-o', out, '--problem', join(dir, 'none.json')], /none\.json: cannot read the problem file/],
      [[mpqpTable, '-o', out], /mpqp\.json: layout: this table holds a directly given mpQP/],
      [[join(dir, 'missing.json'), '-o', out], /missing\.json: cannot read table file/],
    ];
    for (const [args, re] of cases) {
      const r = await run(args);
      expect(r.status, `${args.join(' ')}: ${r.stderr}`).toBe(2);
      expect(r.stderr.trim().split('\n').length).toBe(1);
      expect(r.stderr).toMatch(re);
      expect(existsSync(out)).toBe(false);
    }
  });
});
