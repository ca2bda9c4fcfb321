// Second build step after tsc: the browser viewer. esbuild bundles viz/viewer.js (DOM code) with the
// engine's pure core (src/core.ts) and d3 into dist/viz/viewer.js; the page and its stylesheet are
// copied beside it. `tessera view` serves or inlines these files, so the browser runs the engine's
// own slice, feasibility, gap, colour, heat and closed-loop code, never a re-typed copy.
import { copyFileSync, mkdirSync, rmSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { buildSync } from 'esbuild';

const root = join(dirname(fileURLToPath(import.meta.url)), '..');
const out = join(root, 'dist', 'viz');
rmSync(out, { recursive: true, force: true });
mkdirSync(out, { recursive: true });
buildSync({
  entryPoints: [join(root, 'viz', 'viewer.js')],
  outfile: join(out, 'viewer.js'),
  bundle: true,
  platform: 'browser',
  format: 'iife',
  target: ['es2020'],
  minify: true,
  legalComments: 'none',
  logLevel: 'warning',
});
for (const f of ['index.html', 'viewer.css']) copyFileSync(join(root, 'viz', f), join(out, f));
