/**
 * The part of a table file that `tessera evaluate --index` needs once the index file is known to be
 * the index of these very bytes (its key holds their SHA-256): the header keys and every region's
 * law, without parsing the regions' half-spaces, facets and centres (8.5 MB of JSON on the 6k-region
 * bench table: ~0.17 s CPU for the whole parse and check against ~0.02 s for this). Pure (bytes in).
 *
 * Why the rest may go unchecked: an index file is written only by a run that read the whole table
 * file and checked it (`readTableFile`); the same SHA-256 means the same bytes. The laws read here
 * are the same doubles the full parse gives (`JSON.parse` of the same number text).
 */
import type { AffineMap } from '../mpqp/types.js';
import type { TableFile } from './format.js';
import { checkTable } from './table.js';

/** A table with its header keys and, per region, the law only (`readTableLaws`). */
export type LawTable = Omit<TableFile, 'regions'> & { regions: { law: AffineMap }[]; lawsOnly: true };

/** A full table or one read for its laws only. */
export type EvaluatedTable = TableFile | LawTable;

/** Whether `table` has its regions' half-spaces (a full read), as the point scan and the index build need. */
export function isFullTable(table: EvaluatedTable): table is TableFile {
  return !('lawsOnly' in table);
}

const REGIONS_OPEN = '\n "regions": [\n';
const LAW_KEY = '"law":{';
const latin1 = new TextDecoder('latin1');
const utf8 = new TextDecoder();

/**
 * The header and laws of the table file `bytes` when it has the layout `tableChunks` writes (header
 * keys, `"regions": [` alone on its line, one region per line, ` ]` and the keys after it); null
 * when it has not (the caller then reads the file in full, which reports any problem): no region
 * line, a line without exactly one law, a law that is not `{"F": [[…]…], "g": […]}` of the header's
 * dimensions, or a header that `checkTable` refuses.
 */
export function readTableLaws(bytes: Uint8Array, file: string): LawTable | null {
  // one-byte decoding: the region lines are ASCII (numbers and facet kinds); the header is decoded as UTF-8 below
  const text = latin1.decode(bytes);
  const open = text.indexOf(REGIONS_OPEN);
  if (open < 0) return null;
  const laws: { law: AffineMap }[] = [];
  let at = open + REGIONS_OPEN.length;
  // region lines start with "{"; the line after the last is " ]" (or " ],")
  while (text.charCodeAt(at) === 123) {
    const end = text.indexOf('\n', at);
    if (end < 0) return null;
    const l = text.lastIndexOf(LAW_KEY, end);
    if (l < at || text.indexOf(LAW_KEY, at) !== l) return null;
    // a law holds arrays of numbers only: its object ends at the first "}"
    const close = text.indexOf('}', l + LAW_KEY.length);
    if (close < 0 || close >= end) return null;
    let law: unknown;
    try {
      law = JSON.parse(text.slice(l + LAW_KEY.length - 1, close + 1));
    } catch {
      return null;
    }
    laws.push({ law: law as AffineMap });
    at = end + 1;
  }
  // " ]" closes the array on its own line
  if (!text.startsWith(' ]', at)) return null;
  let head: unknown;
  try {
    head = JSON.parse(utf8.decode(bytes.subarray(0, open)) + '\n "regions": []' + utf8.decode(bytes.subarray(at + 2)));
  } catch {
    return null;
  }
  let checked: TableFile;
  try {
    checked = checkTable(head, file);
  } catch {
    return null;
  }
  const { ntheta, nu } = checked.dims;
  for (const { law } of laws) {
    if (!law || !Array.isArray(law.F) || !Array.isArray(law.g) || law.F.length !== nu || law.g.length !== nu) return null;
    for (let i = 0; i < nu; i++) {
      const row = law.F[i];
      if (!Array.isArray(row) || row.length !== ntheta || typeof law.g[i] !== 'number') return null;
      for (let j = 0; j < ntheta; j++) if (typeof row[j] !== 'number') return null;
    }
  }
  return { ...checked, regions: laws, lawsOnly: true };
}
