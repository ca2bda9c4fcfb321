import { describe, expect, it } from 'vitest';
import { join } from 'node:path';
import { existsSync, mkdtempSync, writeFileSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { spawnSync } from 'node:child_process';
import { JSDOM } from 'jsdom';
import { analyseSlice } from '../../src/check/gaps.js';
import { liftPoint, makeSliceSpec } from '../../src/partition/slice.js';
import { renderMapSvg } from '../../src/plot/svg.js';
import { simulateClosedLoop } from '../../src/plot/trajectory.js';
import { locateSequential, regionContains } from '../../src/table/table.js';
import type { TableFile } from '../../src/table/format.js';
import { qpReference } from '../helpers/reference.js';
import { root, solved } from '../helpers/solved.js';
import { default2d, syntheticProblem, syntheticTable, withoutRegion } from '../gaps/synthetic.js';

function parseSvg(svg: string): Document {
  const doc = new JSDOM(svg, { contentType: 'image/svg+xml' }).window.document;
  expect(doc.getElementsByTagName('parsererror').length).toBe(0);
  expect(doc.documentElement.tagName).toBe('svg');
  return doc;
}

const lawDiffers = (t: TableFile, a: number, b: number) => {
  const A = t.regions[a].law;
  const B = t.regions[b].law;
  return A.F.some((row, i) => Math.abs(A.g[i] - B.g[i]) > 1e-7 || row.some((v, j) => Math.abs(v - B.F[i][j]) > 1e-7));
};

describe.each([
  ['positioning-axis.yaml', 'law'],
  ['buck-duty-cycle.json', 'law'],
  ['valve-actuator.json', 'region'],
  ['thermal-zone-pair.json', 'active'],
] as const)('map of %s coloured by %s', (file, colourBy) => {
  const s = solved(join(root, 'examples', file));
  const spec = makeSliceSpec(s.table.box, [0, 1]);
  const sl = analyseSlice(s.table, s.mpqp, spec);
  const res = renderMapSvg(s.table, sl, { colourBy });
  const doc = parseSvg(res.svg);

  it('has one region shape per non-empty slice polygon, each with a <title> naming id, active set and law', () => {
    const paths = [...doc.querySelectorAll('path.region')];
    expect(paths.length).toBe(sl.polygons.length);
    paths.forEach((el, k) => {
      const r = s.table.regions[sl.polygons[k].index];
      expect(el.getAttribute('data-region')).toBe(String(r.id));
      const title = el.getElementsByTagName('title')[0].textContent!;
      expect(title).toContain(`region ${r.id}`);
      expect(title).toContain('active set');
      expect(title).toContain(`${s.table.inputNames[0]}(0) =`);
    });
  });

  it('neighbour rule: across every edge, a polygon with a different key has a different fill', () => {
    const fills = new Map<number, string>();
    doc.querySelectorAll('path.region').forEach((el) => fills.set(Number(el.getAttribute('data-region')), el.getAttribute('fill')!));
    const byId = new Map(s.table.regions.map((r, i) => [r.id, i]));
    const scale = Math.max(spec.rect.x1 - spec.rect.x0, spec.rect.y1 - spec.rect.y0);
    let pairs = 0;
    for (const p of sl.polygons) {
      const P = p.polygon;
      for (let k = 0; k < P.length; k++) {
        const u = P[k];
        const v = P[(k + 1) % P.length];
        const len = Math.hypot(v[0] - u[0], v[1] - u[1]);
        if (len < 1e-5 * scale) continue;
        // the neighbour across the edge, found by point location just outside its midpoint
        for (const sgn of [1, -1]) {
          const mx = (u[0] + v[0]) / 2 + (sgn * (v[1] - u[1]) * 1e-6 * scale) / len;
          const my = (u[1] + v[1]) / 2 - (sgn * (v[0] - u[0]) * 1e-6 * scale) / len;
          const th = liftPoint(spec, mx, my);
          if (regionContains(s.table.regions[p.index], th, 0)) continue;
          const q = locateSequential(s.table.regions, th, 0);
          if (q < 0 || !fills.has(s.table.regions[q].id)) continue;
          const differ =
            colourBy === 'law'
              ? lawDiffers(s.table, p.index, q)
              : colourBy === 'active'
                ? s.table.regions[p.index].activeSet.join() !== s.table.regions[q].activeSet.join()
                : true;
          if (differ) {
            expect(fills.get(p.id)).not.toBe(fills.get(s.table.regions[q].id));
            pairs++;
          }
        }
      }
    }
    expect(pairs).toBeGreaterThan(5);
    void byId;
  });

  it('title counts no holes for a complete table, and the legend names the hatched infeasible part', () => {
    expect(doc.getElementById('hole-count')!.getAttribute('data-holes')).toBe('0');
    expect(res.svg).toContain('infeasible');
    expect(doc.querySelectorAll('path.hole').length).toBe(0);
  });
});

describe('a table with a deleted region', () => {
  it('is drawn with the hole filled, ringed and counted in the title', () => {
    const full = syntheticTable(default2d);
    const idx = full.regions.findIndex((r) => r.activeSet.length === 0 && r.chebyshev.radius > 0.2);
    const { table, removed } = withoutRegion(full, idx);
    const spec = makeSliceSpec(table.box, [0, 1]);
    const sl = analyseSlice(table, syntheticProblem(default2d), spec);
    const doc = parseSvg(renderMapSvg(table, sl).svg);
    expect(doc.getElementById('hole-count')!.getAttribute('data-holes')).toBe('1');
    expect(doc.getElementById('hole-count')!.textContent).toMatch(/HOLES: 1/);
    expect(doc.querySelectorAll('path.hole').length).toBe(1);
    expect(doc.querySelectorAll('g.hole-marker').length).toBe(1);
    // the hole is exactly the deleted region: same area as its slice polygon in the full table
    const slFull = analyseSlice(full, syntheticProblem(default2d), spec);
    expect(sl.gaps.areas.holes).toBeCloseTo(slFull.polygons.find((p) => p.id === removed.id)!.area, 9);
  });
});

describe('trajectory overlay', () => {
  it('follows the plant under the table law; the first step matches the online QP by quadprog', () => {
    const s = solved(join(root, 'examples', 'positioning-axis.yaml'));
    const m = s.loaded.model;
    const th0 = [1.5, 0.3];
    const tr = simulateClosedLoop(s.table, { A: m.A, B: m.B, Bd: m.Bd }, th0, 25);
    expect(tr.points.length).toBe(26);
    // Goldfarb–Idnani (quadprog) solves the MPC QP at θ0 independently of the table
    const u0 = qpReference(s.mpqp, th0).z.slice(0, m.m);
    const x1 = m.A.map((row, i) => row.reduce((a, v, j) => a + v * th0[j], 0) + m.B[i].reduce((a, v, j) => a + v * u0[j], 0));
    x1.forEach((v, i) => expect(tr.points[1][i]).toBeCloseTo(v, 6));
    const sl = analyseSlice(s.table, s.mpqp, makeSliceSpec(s.table.box, [0, 1]));
    const doc = parseSvg(renderMapSvg(s.table, sl, { trajectories: [tr] }).svg);
    expect(doc.querySelectorAll('path.trajectory').length).toBe(1);
    expect(doc.querySelectorAll('circle.trajectory-start').length).toBe(1);
  });
});

describe('tessera map / gaps on the command line', () => {
  const cli = join(root, 'dist', 'src', 'cli', 'main.js');
  const have = existsSync(cli);
  const dir = mkdtempSync(join(tmpdir(), 'tessera-map-'));
  const s = solved(join(root, 'examples', 'valve-actuator.json'));
  const tablePath = join(dir, 'valve.table.json');
  writeFileSync(tablePath, JSON.stringify(s.table));
  const run = (args: string[]) => spawnSync(process.execPath, [cli, ...args], { encoding: 'utf8' });

  it.skipIf(!have)('writes an SVG for named axes and a fixed value, with a heat map of u(0)', { timeout: 30000 }, () => {
    const out = join(dir, 'm.svg');
    const r = run(['map', tablePath, '--axes', 'flow,cmd_prev', '--fix', 'spool=0.2', '--heat', 'cmd', '-o', out]);
    expect(r.status).toBe(0);
    const doc = parseSvg(readFileSync(out, 'utf8'));
    expect(doc.querySelector('g.heat')).not.toBeNull();
    expect(readFileSync(out, 'utf8')).toContain('spool = 0.2');
  });

  it.skipIf(!have)('bad input: one line naming the key, exit code 2, no output file', { timeout: 30000 }, () => {
    const out = join(dir, 'bad.svg');
    for (const args of [
      ['--axes', 'spool,nope'],
      ['--fix', 'cmd_prev=99'],
      ['--color', 'rainbow'],
    ]) {
      const r = run(['map', tablePath, ...args, '-o', out]);
      expect(r.status).toBe(2);
      expect(r.stderr.trim().split('\n').length).toBe(1);
      expect(r.stderr).toMatch(/^tessera: \(command line\): --(axes|fix|color): /);
      expect(existsSync(out)).toBe(false);
    }
  });

  it.skipIf(!have)('gaps --json on a table with a deleted region exits 1 and lists witnesses inside it', { timeout: 30000 }, () => {
    const t = JSON.parse(JSON.stringify(s.table)) as TableFile;
    const big = t.regions.reduce((a, r, i) => (r.chebyshev.radius > t.regions[a].chebyshev.radius ? i : a), 0);
    const [removed] = t.regions.splice(big, 1);
    const holed = join(dir, 'holed.table.json');
    writeFileSync(holed, JSON.stringify(t));
    const r = run(['gaps', holed, '--json', '--samples', '4000', '--seed', '9']);
    expect(r.status).toBe(1);
    const rep = JSON.parse(r.stdout);
    expect(rep.hasHoles).toBe(true);
    expect(rep.monteCarlo.seed).toBe(9);
    const mc = rep.witnesses.filter((w: { source: string }) => w.source === 'monte-carlo');
    expect(mc.length).toBeGreaterThan(0);
    for (const w of mc) expect(regionContains(removed, w.theta, 1e-7)).toBe(true);
  });
});
