import type { Command } from 'commander';
import { InputError } from '../io/errors.js';
import { writeFileAtomic } from '../io/atomic.js';
import { readTableFile } from '../table/file.js';
import { checkOutputPath } from '../io/output.js';
import { createdNote } from './common.js';
import type { TableFile } from '../table/format.js';
import { loadTableProblem } from './map.js';
import { serveViewer, staticPage, viewerPayload, type ViewerData } from '../io/viewer.js';

export { serveViewer, staticPage, type ViewerData };

/** Viewer data for a table; a separate problem file is read and checked against the table here. */
export function viewerData(table: TableFile, tableFile: string, problemFile?: string): ViewerData {
  const { loaded } = loadTableProblem(table, tableFile, problemFile);
  return viewerPayload(table, problemFile ? { loaded, file: problemFile } : undefined);
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
