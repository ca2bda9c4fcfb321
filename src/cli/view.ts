import type { Command } from 'commander';
import { createServer, type IncomingMessage, type ServerResponse } from 'node:http';
import { existsSync, readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { InputError } from '../io/errors.js';
import { writeFileAtomic } from '../io/atomic.js';
import { checkTable } from '../table/table.js';
import { readTableFile } from '../table/file.js';
import type { TableFile } from '../table/format.js';
import type { MpqpProblem } from '../mpqp/types.js';
import { tol } from '../tol.js';
import { loadTableProblem } from './map.js';

const here = dirname(fileURLToPath(import.meta.url));

/** Walk up from this module to the first directory that holds `rel`. */
function findUp(rel: string): string | null {
  let d = here;
  for (let k = 0; k < 8; k++) {
    const p = join(d, rel);
    if (existsSync(p)) return p;
    const up = dirname(d);
    if (up === d) break;
    d = up;
  }
  return null;
}

function asset(rel: string): string {
  const p = findUp(rel);
  if (!p) throw new InputError(rel, '', 'viewer asset not found beside the installed tessera (reinstall or rebuild)');
  return readFileSync(p, 'utf8');
}

/**
 * The engine's LP kernel as a browser script: the compiled tol.js and lp/kernel.js with their
 * ES import/export lines removed, wrapped to define window.tesseraLp. The viewer computes the
 * feasible set of each slice with the very same kernel as `tessera map`.
 */
export function browserLpScript(): string {
  const strip = (s: string) =>
    s
      .replace(/^import .*?;\s*$/gm, '')
      .replace(/^export /gm, '')
      .replace(/^\/\/# sourceMappingURL=.*$/gm, '');
  const tolJs = findUp(join('dist', 'src', 'tol.js')) ?? join(here, '..', 'tol.js');
  const kernelJs = findUp(join('dist', 'src', 'lp', 'kernel.js')) ?? join(here, '..', 'lp', 'kernel.js');
  if (!existsSync(tolJs) || !existsSync(kernelJs)) throw new InputError(kernelJs, '', 'compiled LP kernel not found: run `npm run build` first');
  return `(function (g) {\n${strip(readFileSync(tolJs, 'utf8'))}\n${strip(readFileSync(kernelJs, 'utf8'))}\ng.tesseraLp = { lpMaximize: lpMaximize, findFeasiblePoint: findFeasiblePoint };\n})(typeof window !== 'undefined' ? window : globalThis);\n`;
}

export interface ViewerData {
  table: TableFile;
  mpqp: { nc: number; nz: number; ntheta: number; G: number[]; w: number[]; E: number[] } | null;
  tol: Record<string, number>;
}

export function mpqpForBrowser(p: MpqpProblem): NonNullable<ViewerData['mpqp']> {
  return { nc: p.nc, nz: p.nz, ntheta: p.ntheta, G: Array.from(p.G), w: Array.from(p.w), E: Array.from(p.E) };
}

export function viewerData(table: TableFile, tableFile: string, problemFile?: string): ViewerData {
  const { mpqp } = loadTableProblem(table, tableFile, problemFile);
  return { table, mpqp: mpqpForBrowser(mpqp), tol: { ...tol } };
}

const scriptSafe = (s: string) => s.replace(/<\/(script)/gi, '<\\/$1');

/** One self-contained HTML file: d3, the LP kernel, the viewer and the table inlined. */
export function staticPage(data: ViewerData): string {
  let html = asset(join('viz', 'index.html'));
  html = html.replace('<link rel="stylesheet" href="viewer.css">', () => `<style>\n${asset(join('viz', 'viewer.css'))}</style>`);
  const scripts: Record<string, () => string> = {
    'd3.min.js': () => asset(join('node_modules', 'd3', 'dist', 'd3.min.js')),
    'lp.js': browserLpScript,
    'geometry.js': () => asset(join('viz', 'geometry.js')),
    'viewer.js': () => asset(join('viz', 'viewer.js')),
  };
  for (const [name, src] of Object.entries(scripts)) html = html.replace(`<script src="${name}"></script>`, () => `<script>\n${scriptSafe(src())}\n</script>`);
  const json = JSON.stringify(data).replace(/</g, '\\u003c');
  html = html.replace('<!--tessera:data-->', () => `<script>window.TESSERA_DATA = ${json};</script>`);
  return html;
}

function readBody(req: IncomingMessage, limit: number): Promise<string> {
  return new Promise((resolve, reject) => {
    let size = 0;
    const chunks: Buffer[] = [];
    req.on('data', (c: Buffer) => {
      size += c.length;
      if (size > limit) {
        reject(new Error('request too large'));
        req.destroy();
      } else chunks.push(c);
    });
    req.on('end', () => resolve(Buffer.concat(chunks).toString('utf8')));
    req.on('error', reject);
  });
}

/** Serve the viewer on 127.0.0.1; resolves with the URL once listening. */
export function serveViewer(data: ViewerData, port = 0): Promise<{ url: string; close: () => Promise<void> }> {
  const types: Record<string, string> = { html: 'text/html; charset=utf-8', js: 'text/javascript; charset=utf-8', css: 'text/css; charset=utf-8', json: 'application/json' };
  const files: Record<string, () => string> = {
    '/': () => asset(join('viz', 'index.html')).replace('<!--tessera:data-->', ''),
    '/viewer.js': () => asset(join('viz', 'viewer.js')),
    '/geometry.js': () => asset(join('viz', 'geometry.js')),
    '/viewer.css': () => asset(join('viz', 'viewer.css')),
    '/d3.min.js': () => asset(join('node_modules', 'd3', 'dist', 'd3.min.js')),
    '/lp.js': browserLpScript,
    '/data.json': () => JSON.stringify(data),
  };
  const server = createServer((req: IncomingMessage, res: ServerResponse) => {
    const path = (req.url ?? '/').split('?')[0];
    const send = (code: number, type: string, body: string) => {
      res.writeHead(code, { 'content-type': type, 'cache-control': 'no-store' });
      res.end(body);
    };
    if (req.method === 'POST' && path === '/api/mpqp') {
      // a table loaded in the page: rebuild its mpQP from the problem it carries
      readBody(req, 64 * 1024 * 1024)
        .then((text) => {
          const t = checkTable(JSON.parse(text), 'uploaded table');
          send(200, types.json, JSON.stringify(mpqpForBrowser(loadTableProblem(t, 'uploaded table').mpqp)));
        })
        .catch((e: unknown) => send(400, 'text/plain; charset=utf-8', e instanceof Error ? e.message : String(e)));
      return;
    }
    const f = files[path === '/index.html' ? '/' : path];
    if (req.method !== 'GET' || !f) return send(404, 'text/plain; charset=utf-8', 'not found');
    try {
      const ext = path === '/' || path === '/index.html' ? 'html' : path.split('.').pop()!;
      send(200, types[ext] ?? 'application/octet-stream', f());
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

export function register(program: Command): void {
  program
    .command('view')
    .description('browse a table in the browser: serve a viewer on 127.0.0.1, or write one self-contained HTML page with -o')
    .argument('<table>', 'table file written by tessera solve')
    .option('--problem <file>', 'problem file deciding feasibility (default: the problem stored in the table)')
    .option('-o, --output <html>', 'write a single static HTML file (table embedded) instead of serving')
    .option('--port <n>', 'port to serve on (default: a free one)', (v: string) => {
      const x = Number(v);
      if (!Number.isInteger(x) || x < 0 || x > 65535) throw new InputError('(command line)', '--port', `expected a port number 0…65535, got "${v}"`);
      return x;
    })
    .action(async (tableFile: string, o: { problem?: string; output?: string; port?: number }) => {
      const table = readTableFile(tableFile);
      const data = viewerData(table, tableFile, o.problem);
      if (o.output) {
        writeFileAtomic(o.output, staticPage(data));
        process.stdout.write(`viewer for ${table.name} written to ${o.output} (open it in a browser; no server needed)\n`);
        return;
      }
      const srv = await serveViewer(data, o.port ?? 0);
      process.stdout.write(`tessera view: ${table.name} at ${srv.url}  (Ctrl-C stops)\n`);
      const stop = () => {
        void srv.close().then(() => process.exit(0));
        setTimeout(() => process.exit(0), 500).unref();
      };
      process.once('SIGINT', stop);
      process.once('SIGTERM', stop);
    });
}
