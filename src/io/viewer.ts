/**
 * The browser viewer as files and a local server (Node): the bundled page of dist/viz with a
 * table inlined (`staticPage`), or served on 127.0.0.1 (`serveViewer`). The page itself rebuilds
 * the mpQP from the table with the bundled core; nothing of the engine is copied here.
 */
import { createServer, type IncomingMessage, type ServerResponse } from 'node:http';
import { existsSync, readFileSync } from 'node:fs';
import { basename, dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { InputError } from '../io/input-error.js';
import type { TableFile } from '../table/format.js';
import type { LoadedProblem } from '../problem/types.js';

const here = dirname(fileURLToPath(import.meta.url));

/**
 * dist/viz, built by `npm run build` (scripts/build-viewer.mjs): from dist/src/io (the installed
 * package) it is ../../viz; from src/io (tests running the sources) it is ../../dist/viz.
 */
function viewerDir(): string {
  const up = join(here, '..', '..');
  return basename(up) === 'dist' ? join(up, 'viz') : join(up, 'dist', 'viz');
}

/** A file of the built viewer (dist/viz) as text; InputError when the build is missing. */
export function viewerAsset(name: string): string {
  const p = join(viewerDir(), name);
  if (!existsSync(p)) throw new InputError(p, '', 'viewer asset not found: run `npm run build` (or reinstall tessera)');
  return readFileSync(p, 'utf8');
}

/**
 * What the page receives: the table, and the raw problem document when feasibility is to be judged
 * by a problem other than the one the table echoes. The page rebuilds the mpQP itself with the
 * bundled core, exactly as `tessera map` does in Node.
 */
export interface ViewerData {
  table: TableFile;
  problem: unknown | null;
  problemFile?: string;
}

/**
 * Viewer data for a table: with a separately read problem (`problem`, checked against the table
 * by the caller, e.g. with `tableProblem`) its raw document and file name go along, else the page
 * uses the table's own echo.
 */
export function viewerPayload(table: TableFile, problem?: { loaded: LoadedProblem; file: string }): ViewerData {
  return problem ? { table, problem: problem.loaded.raw, problemFile: problem.file } : { table, problem: null };
}

const scriptSafe = (s: string) => s.replace(/<\/(script)/gi, '<\\/$1');

/** One self-contained HTML file: the stylesheet, the bundled viewer (engine core + d3) and the data inlined. */
export function staticPage(data: ViewerData): string {
  let html = viewerAsset('index.html');
  html = html.replace('<link rel="stylesheet" href="viewer.css">', () => `<style>\n${viewerAsset('viewer.css')}</style>`);
  html = html.replace('<script src="viewer.js"></script>', () => `<script>\n${scriptSafe(viewerAsset('viewer.js'))}\n</script>`);
  const json = JSON.stringify(data).replace(/</g, '\\u003c');
  html = html.replace('<!--tessera:data-->', () => `<script>window.TESSERA_DATA = ${json};</script>`);
  return html;
}

/** Serve the viewer on 127.0.0.1; resolves with the URL once listening. */
export function serveViewer(data: ViewerData, port = 0): Promise<{ url: string; close: () => Promise<void> }> {
  const files: Record<string, [string, () => string]> = {
    '/': ['text/html; charset=utf-8', () => viewerAsset('index.html').replace('<!--tessera:data-->', '')],
    '/viewer.js': ['text/javascript; charset=utf-8', () => viewerAsset('viewer.js')],
    '/viewer.css': ['text/css; charset=utf-8', () => viewerAsset('viewer.css')],
    '/data.json': ['application/json', () => JSON.stringify(data)],
  };
  const server = createServer((req: IncomingMessage, res: ServerResponse) => {
    const path = (req.url ?? '/').split('?')[0];
    const send = (code: number, type: string, body: string) => {
      res.writeHead(code, { 'content-type': type, 'cache-control': 'no-store' });
      res.end(body);
    };
    const f = files[path === '/index.html' ? '/' : path];
    if (req.method !== 'GET' || !f) return send(404, 'text/plain; charset=utf-8', 'not found');
    try {
      send(200, f[0], f[1]());
    } catch (e) {
      send(500, 'text/plain; charset=utf-8', e instanceof Error ? e.message : String(e));
    }
  });
  return new Promise((resolve, reject) => {
    server.once('error', reject);
    server.listen(port, '127.0.0.1', () => {
      const a = server.address();
      const p = typeof a === 'object' && a ? a.port : port;
      resolve({ url: `http://127.0.0.1:${p}/`, close: () => new Promise((r) => server.close(() => r())) });
    });
  });
}

