import { describe, expect, it } from 'vitest';
import { existsSync, readFileSync } from 'node:fs';
import { dirname, isAbsolute, join, resolve } from 'node:path';

// Every document a user reads in a clone points only to files of the clone: relative links that
// resolve inside the repository, and no absolute or out-of-tree paths (common practice for READMEs).
const root = join(import.meta.dirname, '..', '..');
const docs = ['README.md', 'examples/README.md'];

function references(text: string): string[] {
  const out: string[] = [];
  for (const m of text.matchAll(/\]\(([^)\s]+)\)/g)) out.push(m[1]);
  // paths written as code that look like files of a project (…/x.md, …/x.json)
  for (const m of text.matchAll(/`([^`\s]*\/[^`\s]*\.(?:md|json|yaml|ts))`/g)) out.push(m[1]);
  return out.filter((r) => !/^(https?:|mailto:|#)/.test(r) && !/[*<…]/.test(r));
}

describe('documentation links', () => {
  for (const doc of docs) {
    it(`${doc}: every linked or quoted file exists in the repository`, () => {
      const text = readFileSync(join(root, doc), 'utf8');
      const refs = references(text);
      expect(refs.length).toBeGreaterThan(0);
      for (const r of refs) {
        const path = r.split('#')[0];
        expect(isAbsolute(path), `${doc} refers to an absolute path ${r}`).toBe(false);
        const full = resolve(dirname(join(root, doc)), path);
        expect(full.startsWith(root), `${doc} refers outside the repository: ${r}`).toBe(true);
        expect(existsSync(full), `${doc} refers to a missing file: ${r}`).toBe(true);
      }
    });
  }
  it('README and examples/README point to the format document docs/problem-format.md', () => {
    expect(readFileSync(join(root, 'README.md'), 'utf8')).toContain('](docs/problem-format.md)');
    expect(readFileSync(join(root, 'examples/README.md'), 'utf8')).toContain('](../docs/problem-format.md)');
  });
});
