import type { Command } from 'commander';
import { createServer, type IncomingMessage, type ServerResponse } from 'node:http';
import { existsSync, readFileSync } from 'node:fs';
import { basename, dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { InputError } from '../io/errors.js';
import { writeFileAtomic } from '../io/atomic.js';
import { readTableFile } from '../table/file.js';
import { checkOutputPath } from '../io/output.js';
import { createdNote } from './common.js';
import type { TableFile } from '../table/format.js';
import { loadTableProblem } from './map.js';

const here = dirname(fileURLToPath(import.meta.url));

/**
 * dist/viz, built by `npm run build` (scripts/build-viewer.mjs): from dist/src/cli (the installed
 * CLI) it is ../../viz; from src/cli (tests running the sources) it is ../../dist/viz.
 */
function viewerDir(): string {
  const up = join(here, '..', '..');
  return basename(up) === 'dist' ? join(up, 'viz') : join(up, 'dist', 'viz');
}

function asset(name: string): string {
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

/** Viewer data for a table; a separate problem file is read and checked against the table here. */
export function viewerData(table: TableFile, tableFile: string, problemFile?: string): ViewerData {
  const { loaded } = loadTableProblem(table, tableFile, problemFile);
  return problemFile ? { table, problem: loaded.raw, problemFile } : { table, problem: null };
}

const scriptSafe = (s: string) => s.replace(/<\/(script)/gi, '<\\/$1');

/** One self-contained HTML file: the stylesheet, the bundled viewer (engine core + d3) and the data inlined. */
export function staticPage(data: ViewerData): string {
  let html = asset('index.html');
  html = html.replace('<link rel="stylesheet" href="viewer.css">', () => `<style>\n${asset('viewer.css')}</style>`);
  html = html.replace('<script src="viewer.js"></script>', () => `<script>\n${scriptSafe(asset('viewer.js'))}\n</script>`);
  const json = JSON.stringify(data).replace(/</g, '\\u003c');
  html = html.replace('<!--tessera:data-->', () => `<script>window.TESSERA_DATA = ${json};</script>`);
  return html;
}

/** Serve the viewer on 127.0.0.1; resolves with the URL once listening. */
export function serveViewer(data: ViewerData, port = 0): Promise<{ url: string; close: () => Promise<void> }> {
  const files: Record<string, [string, () => string]> = {
    '/': ['text/html; charset=utf-8', () => asset('index.html').replace('<!--tessera:data-->', '')],
    '/viewer.js': ['text/javascript; charset=utf-8', () => asset('viewer.js')],
    '/viewer.css': ['text/css; charset=utf-8', () => asset('viewer.css')],
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

export function register(program: Command): void {
  program
    .command('view')
    .description('browse a table in the browser: serve a viewer on 127.0.0.1, or write one self-contained HTML page with -o')
    .argument('<table>', 'table file written by tessera solve')
    .option('--problem <file>', 'problem file deciding feasibility (default: the problem stored in the table)')
    .option('-o, --output <html>', 'write a single static HTML file (.html, table embedded) instead of serving')
    .option('--port <n>', 'port to serve on (default: a free one)', (v: string) => {
      const x = Number(v);
      if (!Number.isInteger(x) || x < 0 || x > 65535) throw new InputError('(command line)', '--port', `expected a port number 0…65535, got "${v}"`);
      return x;
    })
    .option('-q, --quiet', 'print nothing but errors (the address of a served viewer is still printed)')
    .action(async (tableFile: string, o: { problem?: string; output?: string; port?: number; quiet?: boolean }) => {
      const created = o.output ? checkOutputPath(o.output, '-o', { kind: 'file', extensions: ['.html', '.htm'], what: 'an HTML page' }) : null;
      const table = readTableFile(tableFile);
      const data = viewerData(table, tableFile, o.problem);
      if (o.output) {
        writeFileAtomic(o.output, staticPage(data));
        if (o.quiet) return;
        if (created) createdNote(created);
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
