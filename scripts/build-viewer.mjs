// Second build step after tsc: the viewer's files into dist/viz, where `tessera view` finds them in
// an installed package (which ships dist only).
import { copyFileSync, mkdirSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

const root = join(dirname(fileURLToPath(import.meta.url)), '..');
const out = join(root, 'dist', 'viz');
mkdirSync(out, { recursive: true });
for (const f of ['index.html', 'viewer.css', 'viewer.js', 'geometry.js']) copyFileSync(join(root, 'viz', f), join(out, f));
