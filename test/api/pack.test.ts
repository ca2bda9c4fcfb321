/**
 * The package as a user gets it: `npm pack` of the built tree, installed into a fresh project, runs
 * the README's library example verbatim. Also checks that the tarball holds only dist, README,
 * LICENSE and package.json. The install is offline: `npm install --offline` of the tarball (its
 * dependencies come from the npm cache that `npm ci` filled); when the cache lacks them, the tarball
 * is unpacked by hand and the dependencies linked from this checkout's node_modules, so the test
 * still exercises the packed files and the `exports` map.
 */
import { execFileSync, spawnSync } from 'node:child_process';
import { copyFileSync, existsSync, mkdirSync, mkdtempSync, readFileSync, rmSync, symlinkSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { loadProblem, tableProblem } from '../../src/index.js';
import { qpReference } from '../helpers/reference.js';

const root = join(import.meta.dirname, '..', '..');
const work = mkdtempSync(join(tmpdir(), 'tessera-pack-'));
afterAll(() => rmSync(work, { recursive: true, force: true }));

/** The code block after the README's `library-example` marker. */
function readmeExample(): string {
  const readme = readFileSync(join(root, 'README.md'), 'utf8');
  const m = /<!-- library-example:[^>]*-->\s*```js\n([\s\S]*?)```/.exec(readme);
  if (!m) throw new Error('README has no library-example block');
  return m[1];
}

function pack(): { tarball: string; files: string[] } {
  if (!existsSync(join(root, 'dist', 'src', 'index.js'))) execFileSync('npm', ['run', 'build'], { cwd: root, stdio: 'ignore' });
  // the build has run (npm test builds first); --ignore-scripts packs it as it is
  const out = execFileSync('npm', ['pack', '--ignore-scripts', '--json', '--pack-destination', work], { cwd: root, encoding: 'utf8' });
  const info = JSON.parse(out)[0] as { filename: string; files: { path: string }[] };
  return { tarball: join(work, info.filename), files: info.files.map((f) => f.path) };
}

function install(tarball: string, project: string): 'npm install --offline' | 'unpacked + linked' {
  const r = spawnSync('npm', ['install', '--offline', '--no-audit', '--no-fund', '--ignore-scripts', tarball], { cwd: project, encoding: 'utf8', timeout: 180000 });
  if (r.status === 0 && existsSync(join(project, 'node_modules', 'tessera', 'package.json'))) return 'npm install --offline';
  const dest = join(project, 'node_modules', 'tessera');
  mkdirSync(dest, { recursive: true });
  execFileSync('tar', ['-xzf', tarball, '-C', dest, '--strip-components=1']);
  const deps = Object.keys((JSON.parse(readFileSync(join(dest, 'package.json'), 'utf8')) as { dependencies: Record<string, string> }).dependencies);
  for (const d of deps) if (!existsSync(join(project, 'node_modules', d))) symlinkSync(join(root, 'node_modules', d), join(project, 'node_modules', d), 'dir');
  return 'unpacked + linked';
}

describe('npm pack → install → README example', () => {
  it('the tarball holds only dist (.js, .d.ts), README, LICENSE and package.json', { timeout: 120000 }, () => {
    const { files } = pack();
    expect(files).toContain('dist/src/index.js');
    expect(files).toContain('dist/src/index.d.ts');
    expect(files).toContain('dist/src/core.d.ts');
    expect(files).toContain('LICENSE');
    expect(files).toContain('dist/viz/viewer.js');
    expect(files).toContain('dist/viz/index.html');
    expect(files.some((f) => f.startsWith('viz/'))).toBe(false); // the sources of the viewer stay out
    expect(files).toContain('README.md');
    const stray = files.filter((f) => !/^(dist\/.*\.(js|d\.ts|html|css)|README\.md|LICENSE|package\.json)$/.test(f) || f.endsWith('.map') || f.startsWith('dist/test/'));
    expect(stray).toEqual([]);
  });

  it('runs the README library example from the installed tarball; u(0) matches quadprog', { timeout: 300000 }, () => {
    const { tarball } = pack();
    const project = join(work, 'project');
    mkdirSync(project);
    writeFileSync(join(project, 'package.json'), JSON.stringify({ name: 'tessera-user', private: true, type: 'module' }));
    const how = install(tarball, project);
    console.log(`tessera installed by ${how}`);
    copyFileSync(join(root, 'examples', 'positioning-axis.yaml'), join(project, 'positioning-axis.yaml'));
    writeFileSync(join(project, 'example.mjs'), readmeExample());
    const r = spawnSync(process.execPath, ['example.mjs'], { cwd: project, encoding: 'utf8', timeout: 240000 });
    expect(r.stderr).toBe('');
    expect(r.status).toBe(0);
    const m = /^(\d+) regions, complete: true\nθ = \(0\.3, -0\.2\): region (\d+), u\(0\) = (\S+)\n$/.exec(r.stdout);
    expect(m, r.stdout).not.toBeNull();
    // the resolved module is the installed copy, not this checkout
    const resolved = spawnSync(process.execPath, ['--input-type=module', '-e', "console.log(import.meta.resolve('tessera'))"], { cwd: project, encoding: 'utf8' }).stdout;
    expect(resolved).toContain(join(project, 'node_modules', 'tessera', 'dist', 'src', 'index.js'));
    // u(0) against the online QP (quadprog, Goldfarb–Idnani) of the same problem at the same θ
    const { mpqp } = tableProblem({ ...JSON.parse(readFileSync(join(project, 'positioning-axis.table.json'), 'utf8')) });
    const ref = qpReference(mpqp, [0.3, -0.2]);
    expect(ref.feasible).toBe(true);
    const u = m![3].split(',').map(Number);
    expect(u).toHaveLength(mpqp.lawSize);
    u.forEach((v, i) => expect(Math.abs(v - ref.z[i])).toBeLessThan(1e-6));
    const svg = readFileSync(join(project, 'positioning-axis.svg'), 'utf8');
    expect(svg).toMatch(/^<\?xml/);
    expect(svg).toContain('class="heat"');
    expect(loadProblem(join(project, 'positioning-axis.yaml')).name).toBe('positioning-axis');
    // the installed CLI writes the viewer from the packed bundle (dist/viz), nothing from this checkout
    const cli = join(project, 'node_modules', 'tessera', 'dist', 'src', 'cli', 'main.js');
    const v = spawnSync(process.execPath, [cli, 'view', 'positioning-axis.table.json', '-o', 'page.html'], { cwd: project, encoding: 'utf8' });
    expect(v.stderr).toBe('');
    expect(v.status).toBe(0);
    const html = readFileSync(join(project, 'page.html'), 'utf8');
    expect(html).toContain('window.TESSERA_DATA');
    expect(html).toContain('tesseraViewer');
    expect(html).not.toMatch(/<script src=|<link rel="stylesheet"/);
  });
});
