/** The raw arrays of a build for other toolchains: one JSON object, or one CSV file per array. */
import { arraySpecs, type EmitArrays } from './arrays.js';

/** All arrays of a build as one JSON document: name, element type, count and values per array. */
export function arraysToJson(ar: EmitArrays): string {
  const arrays: Record<string, { ctype: string; values: number[] }> = {};
  for (const s of arraySpecs(ar)) arrays[s.name] = { ctype: s.ctype, values: s.values };
  const meta = {
    precision: ar.precision,
    search: ar.search,
    ntheta: ar.ntheta,
    nu: ar.nu,
    regions: ar.regionCount,
    root: ar.root,
    maxDepth: ar.maxDepth,
    slack: ar.slack,
    layout:
      'node child r >= 0 is a node, r < 0 is leaf -r-1; node k plane at node_plane[k*(nt+1)..]: nt coefficients a then b, left when a·θ <= b; region r rows region_row_start[r]..[r+1], inside when region_a·θ <= region_b (slack included); u = law_g[r*nu+i] + law_f[(r*nu+i)*nt..]·θ',
  };
  return JSON.stringify({ ...meta, arrays }) + '\n';
}

/** [name, csv text] per array: header "index,value", numbers with 17 significant digits. */
export function arraysToCsv(ar: EmitArrays): [string, string][] {
  return arraySpecs(ar).map((s) => [s.name, 'index,value\n' + s.values.map((v, i) => `${i},${s.real ? v.toPrecision(17) : v}`).join('\n') + '\n']);
}
