/**
 * The browser viewer in headless Chromium (Debian's /usr/bin/chromium, driven by playwright-core).
 * Skips only on a developer machine without Chromium; under CI it must run.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { existsSync, mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { chromium, type Browser, type Page } from 'playwright-core';
import { serveViewer, staticPage, viewerData, mpqpForBrowser } from '../../src/cli/view.js';
import { makeSliceSpec, sliceRegions, liftPoint } from '../../src/partition/slice.js';
import { analyseSlice } from '../../src/check/gaps.js';
import { centroid } from '../../src/partition/polygon.js';
import { applyAffine, locateSequential } from '../../src/table/table.js';
import { tol } from '../../src/tol.js';
import type { TableFile } from '../../src/table/format.js';
import { root, solved } from '../helpers/solved.js';

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
    expect(existsSync(join(root, 'dist', 'src', 'lp', 'kernel.js')), 'viewer inlines the compiled LP kernel: run `npx tsc -p tsconfig.json` first').toBe(true);
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
    writeFileSync(file, staticPage({ table: t, mpqp: mpqpForBrowser(s.mpqp), tol: { ...tol } }));
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
});
