/**
 * Duplicate keys in a JSON or YAML document. JSON.parse keeps the last of repeated keys without a
 * word, so a problem file like {"horizon": 10, …, "horizon": 3} would silently mean N = 3. We read
 * the same text with the `yaml` package (already a dependency, well kept; JSON is a subset of
 * YAML 1.2 flow style) into its syntax tree, which keeps every key with its position, and walk it.
 */
import { isMap, isScalar, isSeq, parseDocument, type Node } from 'yaml';

export interface DuplicateKey {
  /** key path as the problem-file errors write it: `weights.input`, `constraints.state.upper`, `a[2].b` */
  path: string;
  line: number;
  column: number;
}

function lineCol(text: string, pos: number): { line: number; column: number } {
  const before = text.slice(0, pos);
  return { line: before.split('\n').length, column: pos - before.lastIndexOf('\n') };
}

/** The first repeated key (in document order), or null. Call it on text that already parsed. */
export function findDuplicateKey(text: string): DuplicateKey | null {
  const doc = parseDocument(text, { uniqueKeys: false });
  if (doc.errors.length) return null; // the parser proper reports syntax errors
  let found: DuplicateKey | null = null;
  const walk = (node: unknown, path: string): void => {
    if (found) return;
    if (isMap(node)) {
      const seen = new Set<string>();
      for (const pair of node.items) {
        const k = isScalar(pair.key) ? String(pair.key.value) : String(pair.key);
        const p = path ? `${path}.${k}` : k;
        if (seen.has(k)) {
          const pos = (pair.key as Node | null)?.range?.[0] ?? 0;
          found = { path: p, ...lineCol(text, pos) };
          return;
        }
        seen.add(k);
        walk(pair.value, p);
        if (found) return;
      }
    } else if (isSeq(node)) node.items.forEach((item, i) => walk(item, `${path}[${i}]`));
  };
  walk(doc.contents, '');
  return found;
}
