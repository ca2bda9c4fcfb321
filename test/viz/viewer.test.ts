/**
 * The browser viewer in headless Chromium (Debian's /usr/bin/chromium, driven by playwright-core).
 * Skips only on a developer machine without Chromium; under CI it must run.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { existsSync, mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { chromium, type Browser, type Page } from 'playwright-core';
import { serveViewer, staticPage, viewerData } from '../../src/cli/view.js';
import { analyseSlice, applyAffine, centroid, heatGrid, heatLayer, liftPoint, locateSequential, makeSliceSpec, quadraticAt, sliceRegions, tableToJson, type TableFile } from '../../src/index.js';
import { root, rng, solved } from '../helpers/solved.js';
import { qpReference } from '../helpers/reference.js';

const CHROMIUM = '/usr/bin/chromium';
const skip = !existsSync(CHROMIUM) && !process.env.CI;
if (skip) console.warn('test/viz: /usr/bin/chromium not found and CI is not set: viewer tests skipped (apt-get install chromium)');

const outDir = mkdtempSync(join(tmpdir(), 'tessera-viz-'));

describe.skipIf(skip)('viewer in headless Chromium', { timeout: 60000 }, () => {
  let browser: Browser;
  let page: Page;
  const errors: string[] = [];
  const valve = solved(join(root, 'examples', 'valve-actuator.json'));
  const valveFile = join(root, 'examples', 'valve-actuator.json');

  beforeAll(async () => {
    expect(existsSync(join(root, 'dist', 'viz', 'viewer.js')), 'the viewer is the bundle of viz/viewer.js and the core: run `npm run build` first').toBe(true);
    browser = await chromium.launch({
      executablePath: CHROMIUM,
      args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-component-update', '--disable-sync'],
    });
    page = await browser.newPage({ viewport: { width: 1120, height: 780 } });
    page.on('pageerror', (e) => errors.push(String(e)));
    page.on('console', (m) => m.type() === 'error' && errors.push(m.text()));
  }, 60000);
  afterAll(async () => {
    await browser?.close();
  });

  const redraws = () => page.evaluate(() => (window as unknown as { tesseraViewer: { state: { redraws: number } } }).tesseraViewer.state.redraws);
  const project = (x: number, y: number) =>
    page.evaluate(([a, b]) => (window as unknown as { tesseraViewer: { project: (x: number, y: number) => [number, number] } }).tesseraViewer.project(a, b), [x, y]);

  async function open(url: string) {
    await page.goto(url);
    await page.waitForFunction(() => {
      const v = (window as unknown as { tesseraViewer?: { state: { redraws: number } } }).tesseraViewer;
      return !!v && v.state.redraws > 0;
    });
  }

  it('static page: loads the table, draws the same slice as the Node code, hover names the right region', async () => {
    const file = join(outDir, 'valve.html');
    writeFileSync(file, staticPage(viewerData(valve.table, valveFile)));
    await open(`file://${file}`);
    const spec = makeSliceSpec(valve.table.box, [0, 1]);
    const polys = sliceRegions(valve.table.regions, spec);
    expect(await page.locator('path.region').count()).toBe(polys.length);
    expect(await page.locator('#hole-count').getAttribute('data-holes')).toBe('0');
    // hover the centroid of the three largest slice polygons; the expected id comes from Node's point location
    const big = polys.slice().sort((a, b) => b.area - a.area).slice(0, 3);
    for (const p of big) {
      const [x, y] = centroid(p.polygon);
      const expected = valve.table.regions[locateSequential(valve.table.regions, liftPoint(spec, x, y))].id;
      const [px, py] = await project(x, y);
      await page.mouse.move(px, py);
      expect(await page.locator('#info').getAttribute('data-region')).toBe(String(expected));
      expect(await page.locator('#info').textContent()).toContain(`region ${expected}`);
    }
    // click reads u(0); the value is the region's law at the clicked θ (table evaluation in Node)
    const [x, y] = centroid(big[0].polygon);
    const [px, py] = await project(x, y);
    await page.mouse.click(px, py);
    const th = JSON.parse((await page.locator('#readout').getAttribute('data-theta'))!) as number[];
    const u = JSON.parse((await page.locator('#readout').getAttribute('data-u'))!) as number[];
    const ri = locateSequential(valve.table.regions, th);
    expect(ri).toBeGreaterThanOrEqual(0);
    applyAffine(valve.table.regions[ri].law, th).forEach((v, i) => expect(u[i]).toBeCloseTo(v, 9));
    await page.screenshot({ path: join(outDir, 'viewer-static.png') });
    expect(errors).toEqual([]);
  });

  it('changing a fixed value redraws the slice at that value', async () => {
    const before = await redraws();
    const dBefore = await page.locator('path.region').first().getAttribute('d');
    const value = 0.08;
    await page.evaluate((v) => {
      const el = document.getElementById('fix-2') as HTMLInputElement;
      el.value = String(v);
      el.dispatchEvent(new Event('input', { bubbles: true }));
    }, value);
    expect(await redraws()).toBeGreaterThan(before);
    const actual = Number(await page.locator('#fix-2').inputValue());
    const spec = makeSliceSpec(valve.table.box, [0, 1], new Map([[2, actual]]));
    const polys = sliceRegions(valve.table.regions, spec);
    expect(await page.locator('path.region').count()).toBe(polys.length);
    expect(await page.locator('#fix-2-value').textContent()).toBe(String(+actual.toPrecision(4)));
    // the same θ now belongs to the region that Node finds at the new fixed value
    const p = polys.slice().sort((a, b) => b.area - a.area)[1];
    const [x, y] = centroid(p.polygon);
    const [px, py] = await project(x, y);
    await page.mouse.move(px, py);
    const expected = valve.table.regions[locateSequential(valve.table.regions, liftPoint(spec, x, y))].id;
    expect(await page.locator('#info').getAttribute('data-region')).toBe(String(expected));
    expect(await page.locator('path.region').first().getAttribute('d')).not.toBe(dBefore);
    // the clicked-point readout follows the slider: its θ carries the new fixed value
    const th = JSON.parse((await page.locator('#readout').getAttribute('data-theta'))!) as number[];
    expect(th[2]).toBeCloseTo(actual, 12);
    const ri = locateSequential(valve.table.regions, th);
    const u = JSON.parse((await page.locator('#readout').getAttribute('data-u'))!) as number[];
    applyAffine(valve.table.regions[ri].law, th).forEach((v, i) => expect(u[i]).toBeCloseTo(v, 9));
    await page.screenshot({ path: join(outDir, 'viewer-fixed.png') });
  });

  it('a table with a deleted region shows one hole, counted; the gap overlay toggles', async () => {
    const s = solved(join(root, 'examples', 'positioning-axis.yaml'));
    const t = JSON.parse(JSON.stringify(s.table)) as TableFile;
    const spec = makeSliceSpec(t.box, [0, 1]);
    const polys = sliceRegions(t.regions, spec);
    const victim = polys.slice().sort((a, b) => b.area - a.area)[3];
    t.regions.splice(victim.index, 1);
    const expected = analyseSlice(t, s.mpqp, spec).gaps.holeGroups.length;
    expect(expected).toBe(1);
    const file = join(outDir, 'holed.html');
    writeFileSync(file, staticPage(viewerData(t, 'holed table')));
    await open(`file://${file}`);
    expect(await page.locator('#hole-count').getAttribute('data-holes')).toBe('1');
    expect(await page.locator('#hole-count').textContent()).toMatch(/HOLES: 1/);
    expect(await page.locator('path.hole').count()).toBe(1);
    const [x, y] = centroid(victim.polygon);
    const [px, py] = await project(x, y);
    await page.mouse.move(px, py);
    expect(await page.locator('#info').getAttribute('data-region')).toBe('-1');
    expect(await page.locator('#info').getAttribute('data-gap')).toBe('hole');
    expect(await page.locator('#info').textContent()).toContain('HOLE');
    await page.screenshot({ path: join(outDir, 'viewer-hole.png') });
    await page.locator('#show-gaps').uncheck();
    expect(await page.locator('g.gaps').evaluate((g) => getComputedStyle(g).display)).toBe('none');
  });

  it('server mode on 127.0.0.1 serves the same viewer', async () => {
    const srv = await serveViewer(viewerData(valve.table, valveFile));
    try {
      expect(srv.url).toMatch(/^http:\/\/127\.0\.0\.1:\d+\/$/);
      await open(srv.url);
      const polys = sliceRegions(valve.table.regions, makeSliceSpec(valve.table.box, [0, 1]));
      expect(await page.locator('path.region').count()).toBe(polys.length);
      // the "under the pointer" panel names a region of this slice…
      const [hx, hy] = centroid(polys.slice().sort((a, b) => b.area - a.area)[0].polygon);
      const [hpx, hpy] = await project(hx, hy);
      await page.mouse.move(hpx, hpy);
      expect(await page.locator('#info').getAttribute('data-region')).not.toBeNull();
      // switching the vertical axis to cmd_prev redraws with spool × cmd_prev
      await page.selectOption('#axis-y', '2');
      // …and is cleared by the change of axes instead of keeping the old slice's region
      expect(await page.locator('#info').getAttribute('data-region')).toBeNull();
      expect(await page.locator('#info').textContent()).toBe('hover a region for its id, active set and law');
      const polys2 = sliceRegions(valve.table.regions, makeSliceSpec(valve.table.box, [0, 2]));
      expect(await page.locator('path.region').count()).toBe(polys2.length);
      expect(await page.locator('#fix-1').count()).toBe(1);
    } finally {
      await srv.close();
    }
  });
  type Viewer = {
    state: { slice: { polygons: { index: number; id: number; polygon: [number, number][]; area: number }[]; feasible: [number, number][] | null; gaps: { areas: Record<string, number>; holeGroups: number[][] } }; trajectories: { points: number[][]; end: string }[]; axes: number[] };
    setFixed: (k: number, v: number) => boolean;
    evaluate: (theta: number[]) => { region: number; u: number[] | null };
    zoomTo: (x0: number, x1: number, y0: number, y1: number) => void;
    visibleWindow: () => { x: number[]; y: number[] };
    exportSvg: () => string;
    exportPng: () => Promise<string>;
  };
  const viewer = <T,>(f: (v: Viewer, arg: any) => T, arg?: unknown) => page.evaluate(([src, a]) => new Function('v', 'a', `return (${src})(v, a)`)((window as unknown as { tesseraViewer: Viewer }).tesseraViewer, a), [f.toString(), arg] as const) as Promise<Awaited<T>>; // eslint-disable-line @typescript-eslint/no-explicit-any

  it('the page and the engine give the same slice: polygons, areas, feasible set, gaps (two tables, moved slider)', async () => {
    const cases: [string, TableFile, Map<number, number>][] = [
      ['valve.html', valve.table, new Map([[2, 0.3]])],
      ['axis.html', solved(join(root, 'examples', 'positioning-axis.yaml')).table, new Map()],
    ];
    for (const [name, t, fixed] of cases) {
      const file = join(outDir, name);
      writeFileSync(file, staticPage(viewerData(t, name)));
      await open(`file://${file}`);
      for (const [k, v] of fixed) expect(await viewer((w, a) => w.setFixed(a[0], a[1]), [k, v])).toBe(true);
      const spec = makeSliceSpec(t.box, [0, 1], fixed);
      // the engine in Node, on the table as read from its file
      const node = analyseSlice(t, solved(t === valve.table ? valveFile : join(root, 'examples', 'positioning-axis.yaml')).mpqp, spec);
      const pageSlice = await viewer((w) => JSON.parse(JSON.stringify(w.state.slice)));
      expect(pageSlice.polygons.map((p: { id: number }) => p.id)).toEqual(node.polygons.map((p) => p.id));
      expect(pageSlice.polygons).toEqual(JSON.parse(JSON.stringify(node.polygons)));
      expect(pageSlice.feasible).toEqual(node.feasible);
      expect(pageSlice.gaps.areas).toEqual(node.gaps.areas);
      expect(await page.locator('path.region').count()).toBe(node.polygons.length);
      // the figures shown: covered, uncovered (= infeasible + holes), infeasible, holes
      expect(JSON.parse((await page.locator('#areas').getAttribute('data-areas'))!)).toEqual(node.gaps.areas);
      const text = (await page.locator('#summary').textContent())!;
      expect(text).toContain(`uncovered ${(100 * node.gaps.areas.uncovered / node.gaps.areas.rect).toFixed(1)}%`);
      expect(node.gaps.areas.uncovered).toBeCloseTo(node.gaps.areas.infeasible + node.gaps.areas.holes, 9);
    }
    expect(errors).toEqual([]);
  });

  it('a NaN θ lies in no region, as in table.ts; a NaN slider value is refused', async () => {
    const file = join(outDir, 'valve.html');
    await open(`file://${file}`);
    expect(await viewer((w) => w.evaluate([NaN, 0, 0]))).toEqual({ region: -1, u: null });
    expect(await viewer((w) => w.evaluate([0, 0, 0]).region)).toBe(locateSequential(valve.table.regions, [0, 0, 0]));
    expect(await viewer((w) => w.setFixed(2, NaN))).toBe(false);
    expect(await viewer((w) => w.setFixed(2, 7))).toBe(false); // outside the box [-1, 1]
    expect(Number(await page.locator('#fix-2').inputValue())).toBe(0); // unchanged: the middle of the box
  });

  it('changing the axes clears the region under the pointer', async () => {
    await open(`file://${join(outDir, 'valve.html')}`);
    const spec = makeSliceSpec(valve.table.box, [0, 1]);
    const big = sliceRegions(valve.table.regions, spec).sort((a, b) => b.area - a.area)[0];
    const [px, py] = await project(...centroid(big.polygon));
    await page.mouse.move(px, py);
    expect(await page.locator('#info').getAttribute('data-region')).toBe(String(big.id));
    await page.selectOption('#axis-y', '2');
    expect(await page.locator('#info').getAttribute('data-region')).toBeNull();
    expect(await page.locator('#info').textContent()).toBe('hover a region for its id, active set and law');
    expect(await page.locator('path.region.hover').count()).toBe(0);
  });

  it('heat layers: u(0) and the optimal cost; range as the engine computes it, cost = quadprog optimum', async () => {
    await open(`file://${join(outDir, 'valve.html')}`);
    const spec = makeSliceSpec(valve.table.box, [0, 1]);
    for (const what of ['cmd', 'cost']) {
      await page.selectOption('#heat', what);
      expect(await page.locator('g.heat rect').count()).toBeGreaterThan(50);
      const layer = heatLayer(valve.table, spec, what);
      layer.cells = 120;
      const range = JSON.parse((await page.locator('.heat-range').getAttribute('data-range'))!);
      expect(range).toEqual(heatGrid(spec, layer).range);
    }
    // the cost layer's meaning, checked against the online QP: J*(θ) = ½zᵀHz + zᵀFθ + ½θᵀYθ at quadprog's z (seeded points)
    const { mpqp } = solved(valveFile);
    const rnd = rng(5);
    let checked = 0;
    for (let k = 0; k < 40 && checked < 5; k++) {
      const th = liftPoint(spec, -1 + 2 * rnd(), -1 + 2 * rnd());
      const ri = locateSequential(valve.table.regions, th);
      const ref = qpReference(mpqp, th);
      if (ri < 0 || !ref.feasible) continue;
      const { nz, ntheta: nt } = mpqp;
      let j = 0;
      for (let a = 0; a < nz; a++) {
        for (let b = 0; b < nz; b++) j += 0.5 * ref.z[a] * mpqp.H[a * nz + b] * ref.z[b];
        for (let b = 0; b < nt; b++) j += ref.z[a] * mpqp.F[a * nt + b] * th[b];
      }
      for (let a = 0; a < nt; a++) for (let b = 0; b < nt; b++) j += 0.5 * th[a] * mpqp.Y[a * nt + b] * th[b];
      const v = layer0(valve.table, spec, 'cost').value(th[0], th[1]);
      expect(Math.abs(v! - j)).toBeLessThan(1e-6 * (1 + Math.abs(j)));
      expect(v).toBeCloseTo(quadraticAt(valve.table.regions[ri].value, th), 12);
      checked++;
    }
    expect(checked).toBe(5);
    await page.selectOption('#heat', 'none');
    expect(await page.locator('g.heat rect').count()).toBe(0);
  });
  const layer0 = (t: TableFile, spec: ReturnType<typeof makeSliceSpec>, what: string) => heatLayer(t, spec, what);

  it('a click in run mode starts a closed loop that matches a simulation with quadprog as the controller', async () => {
    await open(`file://${join(outDir, 'valve.html')}`);
    await page.locator('#traj-mode').check();
    const start: [number, number] = [0.6, -0.4];
    const [px, py] = await project(...start);
    await page.mouse.click(px, py);
    const runs = await viewer((w) => w.state.trajectories);
    expect(runs).toHaveLength(1);
    expect(await page.locator('g.trajectory').count()).toBe(1);
    const pts = runs[0].points;
    expect(pts.length).toBe(41);
    // reference: x⁺ = A x + B u with u = the first move of quadprog's online QP, θ = [x; u_prev]
    const { loaded, mpqp } = solved(valveFile);
    const { A, B } = loaded.model;
    let th = pts[0];
    expect(th[2]).toBeCloseTo(0, 12); // the fixed value of cmd_prev: the middle of the box
    for (let k = 1; k < pts.length; k++) {
      const u = qpReference(mpqp, th).z.slice(0, 1);
      const x = th.slice(0, 2);
      th = [...A.map((row, i) => row[0] * x[0] + row[1] * x[1] + B[i][0] * u[0]), u[0]];
      th.forEach((v, i) => expect(Math.abs(pts[k][i] - v)).toBeLessThan(1e-6));
    }
    await page.locator('#traj-clear').click();
    expect(await page.locator('g.trajectory').count()).toBe(0);
  });

  it('region ids, zoom and pan: labels at the polygons, hover still exact inside a zoomed window', async () => {
    await open(`file://${join(outDir, 'valve.html')}`);
    await page.locator('#show-ids').check();
    const spec = makeSliceSpec(valve.table.box, [0, 1]);
    const polys = sliceRegions(valve.table.regions, spec);
    const ids = await page.locator('g.ids text').evaluateAll((ts) => ts.map((t) => Number(t.getAttribute('data-region'))));
    expect(ids.length).toBeGreaterThan(3);
    for (const id of ids) expect(polys.some((p) => p.id === id)).toBe(true);
    // zoom into a quarter of the slice; the axes follow and hover still names Node's region
    await viewer((w) => w.zoomTo(0, 1, 0, 1));
    const win = await viewer((w) => w.visibleWindow());
    expect(win.x[0]).toBeCloseTo(0, 6);
    expect(win.x[1]).toBeCloseTo(1, 6);
    expect(win.y[0]).toBeCloseTo(0, 6);
    expect(win.y[1]).toBeCloseTo(1, 6);
    const inWin = polys.filter((p) => {
      const [x, y] = centroid(p.polygon);
      return x > 0.05 && x < 0.95 && y > 0.05 && y < 0.95;
    });
    expect(inWin.length).toBeGreaterThan(0);
    for (const p of inWin.slice(0, 3)) {
      const [x, y] = centroid(p.polygon);
      const [px, py] = await project(x, y);
      await page.mouse.move(px, py);
      expect(await page.locator('#info').getAttribute('data-region')).toBe(String(valve.table.regions[locateSequential(valve.table.regions, liftPoint(spec, x, y))].id));
    }
    // pan by dragging the content 0.2 to the right: the window moves 0.2 to the left
    const [ax, ay] = await project(0.2, 0.5);
    const [bx] = await project(0.4, 0.5);
    await page.mouse.move(ax, ay);
    await page.mouse.down();
    await page.mouse.move(bx, ay, { steps: 5 });
    await page.mouse.up();
    const moved = await viewer((w) => w.visibleWindow());
    expect(moved.x[0]).toBeCloseTo(-0.2, 2);
    expect(moved.x[1]).toBeCloseTo(0.8, 2);
    await page.locator('#zoom-reset').click();
    await page.waitForFunction(() => (window as unknown as { tesseraViewer: Viewer }).tesseraViewer.visibleWindow().x[0] === -1);
  });

  it('exports the current view as SVG and PNG', async () => {
    await open(`file://${join(outDir, 'valve.html')}`);
    await page.selectOption('#heat', 'cmd');
    const svgText = await viewer((w) => w.exportSvg());
    const polys = sliceRegions(valve.table.regions, makeSliceSpec(valve.table.box, [0, 1]));
    expect(svgText.startsWith('<?xml')).toBe(true);
    expect(svgText).toContain('xmlns="http://www.w3.org/2000/svg"');
    expect(svgText.match(/class="region( hover)?"/g)?.length).toBe(polys.length);
    expect(svgText).toMatch(/<g class="heat"[^>]*>\s*<rect/);
    expect(svgText).not.toContain('class="pick"');
    // the exported file renders on its own: open it as a page and count the region paths
    const svgFile = join(outDir, 'export.svg');
    writeFileSync(svgFile, svgText);
    const p2 = await browser.newPage();
    await p2.goto(`file://${svgFile}`);
    expect(await p2.locator('path.region').count()).toBe(polys.length);
    await p2.close();
    const png = await viewer((w) => w.exportPng());
    expect(png.startsWith('data:image/png;base64,')).toBe(true);
    const bytes = Buffer.from(png.slice('data:image/png;base64,'.length), 'base64');
    expect([...bytes.subarray(0, 8)]).toEqual([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]); // PNG signature (ISO/IEC 15948)
    expect(bytes.readUInt32BE(16)).toBe(1280); // IHDR width: 640 px at scale 2
    expect(bytes.readUInt32BE(20)).toBe(1120);
    expect(errors).toEqual([]);
  });

  it('"Load table…" in a static page rebuilds the mpQP in the browser from the table (no server)', async () => {
    await open(`file://${join(outDir, 'valve.html')}`);
    const axis = solved(join(root, 'examples', 'positioning-axis.yaml'));
    const tf = join(outDir, 'axis.table.json');
    writeFileSync(tf, tableToJson(axis.table));
    const before = await redraws();
    await page.locator('#file').setInputFiles(tf);
    await page.waitForFunction((n) => (window as unknown as { tesseraViewer: { state: { redraws: number } } }).tesseraViewer.state.redraws > n, before);
    expect(await page.locator('#title').textContent()).toBe(axis.table.name);
    const node = analyseSlice(axis.table, axis.mpqp, makeSliceSpec(axis.table.box, [0, 1]));
    expect(await page.locator('path.region').count()).toBe(node.polygons.length);
    expect(JSON.parse((await page.locator('#areas').getAttribute('data-areas'))!)).toEqual(node.gaps.areas);
  });
});
