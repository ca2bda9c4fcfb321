/** Every function and class the package exports carries a doc comment (read by the TypeScript compiler API). */
import { join } from 'node:path';
import ts from 'typescript';
import { describe, expect, it } from 'vitest';

const root = join(import.meta.dirname, '..', '..');

function undocumented(entry: string): { exported: number; missing: string[] } {
  const program = ts.createProgram([entry], { target: ts.ScriptTarget.ES2022, module: ts.ModuleKind.NodeNext, moduleResolution: ts.ModuleResolutionKind.NodeNext, strict: true, skipLibCheck: true, noEmit: true });
  const checker = program.getTypeChecker();
  const mod = checker.getSymbolAtLocation(program.getSourceFile(entry)!)!;
  const missing: string[] = [];
  let exported = 0;
  for (const sym of checker.getExportsOfModule(mod)) {
    const target = sym.flags & ts.SymbolFlags.Alias ? checker.getAliasedSymbol(sym) : sym;
    if (!(target.flags & (ts.SymbolFlags.Function | ts.SymbolFlags.Class))) continue;
    exported++;
    const doc = ts.displayPartsToString(target.getDocumentationComment(checker)).trim();
    if (doc.length < 10) missing.push(sym.getName());
  }
  return { exported, missing };
}

describe('TSDoc on the public API', () => {
  for (const entry of ['core.ts', 'index.ts']) {
    it(`every exported function and class of src/${entry} has a doc comment`, { timeout: 60000 }, () => {
      const r = undocumented(join(root, 'src', entry));
      expect(r.exported).toBeGreaterThan(30);
      expect(r.missing).toEqual([]);
    });
  }
});
