/**
 * The core entry (src/core.ts) must run where there is no Node: no `node:*` or Node built-in import
 * anywhere in its import graph, and esbuild (the bundler `npm run build` uses for the viewer) must
 * bundle it for the browser platform, which fails on any Node built-in reached through a dependency.
 */
import { readFileSync } from 'node:fs';
import { builtinModules } from 'node:module';
import { dirname, join, relative, resolve } from 'node:path';
import { buildSync } from 'esbuild';
import { describe, expect, it } from 'vitest';

const root = join(import.meta.dirname, '..', '..');
const builtins = new Set(builtinModules);

/** Every module specifier a TypeScript file imports or re-exports (static and dynamic). */
function specifiers(text: string): string[] {
  const out: string[] = [];
  const re = /(?:^|[\s;])(?:import|export)\s[^'"]*?from\s*['"]([^'"]+)['"]|(?:^|[\s;])import\s*['"]([^'"]+)['"]|import\(\s*['"]([^'"]+)['"]\s*\)/gm;
  for (const m of text.matchAll(re)) out.push(m[1] ?? m[2] ?? m[3]);
  return out;
}

/** Walk the relative imports from `entry`; return every file reached and every bare specifier with its importer. */
function importGraph(entry: string): { files: string[]; bare: { spec: string; from: string }[] } {
  const seen = new Set<string>();
  const bare: { spec: string; from: string }[] = [];
  const stack = [entry];
  while (stack.length) {
    const f = stack.pop()!;
    if (seen.has(f)) continue;
    seen.add(f);
    for (const s of specifiers(readFileSync(f, 'utf8'))) {
      if (s.startsWith('.')) stack.push(resolve(dirname(f), s.replace(/\.js$/, '.ts')));
      else bare.push({ spec: s, from: relative(root, f) });
    }
  }
  return { files: [...seen], bare };
}

describe('the core entry is free of Node', () => {
  it('imports no node:* or built-in module anywhere in its graph', () => {
    const { files, bare } = importGraph(join(root, 'src', 'core.ts'));
    expect(files.length).toBeGreaterThan(20); // the walk really followed the graph
    const nodeOnly = bare.filter(({ spec }) => spec.startsWith('node:') || builtins.has(spec.split('/')[0]));
    expect(nodeOnly).toEqual([]);
  });

  it('the walk sees a node:* import when there is one (the Node entry has them)', () => {
    const { bare } = importGraph(join(root, 'src', 'index.ts'));
    expect(bare.some(({ spec }) => spec.startsWith('node:'))).toBe(true);
  });

  it('esbuild bundles it for the browser platform without errors', () => {
    const res = buildSync({ entryPoints: [join(root, 'src', 'core.ts')], bundle: true, platform: 'browser', format: 'esm', write: false, logLevel: 'silent' });
    expect(res.errors).toEqual([]);
    expect(res.outputFiles[0].text.length).toBeGreaterThan(10000);
  });

  it('the same esbuild check fails on the Node entry', () => {
    expect(() => buildSync({ entryPoints: [join(root, 'src', 'index.ts')], bundle: true, platform: 'browser', format: 'esm', write: false, logLevel: 'silent' })).toThrow(/node:/);
  });
});
