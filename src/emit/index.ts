/**
 * Library entry of the code generator: table (+ optional search tree) → the target's files, its
 * build (the arrays), cost figures. Targets live in ./targets (one printer per language/arithmetic).
 * The search tree is returned to the caller (and written by the CLI as the side file
 * DIR/NAME.tree.json); `locateTree` in src/partition/tree.ts evaluates it from TypeScript.
 */
import { InputError } from '../io/input-error.js';
import { Sha256 } from '../util/sha256.js';
import { tableChunks } from '../table/table.js';
import type { TableFile } from '../table/format.js';
import { buildSearchTree, TREE_FORMAT, TREE_VERSION, type SearchTree, type TreeOptions } from '../partition/tree.js';
import { SEARCH_KINDS, type EmitArrays, type Locator, type Precision, type SearchKind } from './arrays.js';
import { buildLocator, measureCandidates, pickCandidate, type Candidate, type LocatorOptions } from './choose.js';
import { findTarget, targetLanguages, targetPrecisions } from './targets/index.js';
import { fixedPlaneMargin } from './fixed.js';
import type { EmitTarget, TargetCost, TargetFile } from './targets/target.js';

export type { Precision, SearchKind } from './arrays.js';
/** `auto`: every structure is built and the cost model picks one (src/emit/choose.ts). */
export type SearchChoice = SearchKind | 'auto';
/** What `--search` accepts (emit and audit): auto, then every structure. */
export const SEARCH_CHOICES: readonly SearchChoice[] = ['auto', ...SEARCH_KINDS];

/** "sha256:<hex>" of the table file's canonical JSON (hashed piece by piece: no string of the whole table). */
export function tableHash(table: TableFile): string {
  const h = new Sha256();
  for (const c of tableChunks(table)) h.update(c);
  return 'sha256:' + h.hex();
}

export interface EmitOptions<P extends string = Precision> {
  /** target language (default "c") */
  lang?: string;
  precision: P;
  search: SearchChoice;
  prefix: string;
  /** reuse a tree built before (must match the table) */
  tree?: SearchTree;
  treeOptions?: TreeOptions;
  /** reuse a locator built before for a capped or box-tree search (must match the table) */
  locator?: Locator;
  locatorOptions?: LocatorOptions;
  /** region count before a merge, noted in the header */
  mergedFrom?: number;
  /** fixed point: θ fraction bits per component instead of the ones chosen from the box */
  thetaFrac?: number[];
  /** `auto` only: consider just these structures (default: every one the target prints) */
  searches?: readonly SearchKind[];
  /** saturate u to the table's input limits in the generated code (`emit --clamp`) */
  clamp?: boolean;
}

export interface EmitResult<B = EmitArrays> {
  target: EmitTarget<B>;
  /** the generated files, in the order written */
  files: TargetFile[];
  /** C targets: the header and source text (also in `files`) */
  header: string;
  source: string;
  /** the target's build: the numbers its code holds */
  arrays: B;
  /** the structure used (the chosen one for `auto`) */
  search: SearchKind;
  /** the hyperplane tree of a tree/capped search, else null */
  tree: SearchTree | null;
  locator: Locator | null;
  /** every structure measured by `auto` (empty when the search was named) */
  candidates: Candidate[];
  /** why this structure (the header states it too) */
  searchReason: string[];
  cost: TargetCost;
  hash: string;
}

/**
 * Build the binary search tree over the table's regions (hyperplanes from region facets, leaves
 * listing candidate regions), stamped with the table hash so a side file cannot be reused on
 * another table. New data, owned by the caller.
 */
export function treeForTable(table: TableFile, options: TreeOptions = {}): SearchTree {
  return buildSearchTree(table.regions, table.dims.ntheta, { ...options, tableHash: options.tableHash ?? tableHash(table) });
}

/** Generate code for any registered target (language `opts.lang`, default c, and `opts.precision`). */
export function emit<B = unknown>(table: TableFile, opts: EmitOptions<string>): EmitResult<B> {
  const lang = opts.lang ?? 'c';
  const target = findTarget(lang, opts.precision) as EmitTarget<B> | null;
  if (!target) {
    if (!targetLanguages().includes(lang)) throw new Error(`no emit target for language "${lang}" (targets: ${targetLanguages().join(', ')})`);
    throw new Error(`language "${lang}" has no precision "${opts.precision}" (${targetPrecisions(lang).join(', ')})`);
  }
  const hash = tableHash(table);
  const supported = (target.searches ?? (['tree', 'sequential'] as const)).filter((k) => opts.search !== 'auto' || !opts.searches || opts.searches.includes(k));
  let search: SearchKind;
  let locator: Locator | null;
  let candidates: Candidate[] = [];
  let searchReason: string[];
  let built: B | null = null;
  if (opts.search === 'auto') {
    candidates = measureCandidates(table, target, opts.precision, SEARCH_KINDS.filter((k) => supported.includes(k)), {
      ...opts.locatorOptions,
      tree: { ...opts.treeOptions, ...opts.locatorOptions?.tree },
      tableHash: hash,
      targetOptions: { thetaFrac: opts.thetaFrac, clamp: opts.clamp },
    });
    const pick = pickCandidate(candidates);
    search = pick.chosen.search;
    locator = pick.chosen.locator;
    searchReason = pick.reason;
    // the build measured by the cost model, made with the same options as below (no second build)
    built = (pick.chosen.build as B | null) ?? null;
    // the other structures' builds and locators are not read again (the report keeps their figures):
    // let them go before the files are printed (114 379-region table, float auto: peak 2.60 GB with them held)
    for (const c of candidates)
      if (c !== pick.chosen) {
        c.build = null;
        c.locator = null;
      }
  } else {
    search = opts.search;
    if (!supported.includes(search)) throw new Error(`the ${target.id} target prints ${supported.join(' and ')} search, not ${search}`);
    locator =
      search === 'tree'
        ? (opts.tree ??
          treeForTable(table, {
            ...opts.treeOptions,
            tableHash: hash,
            // a fixed-point descent rounds θ to its fraction bits: regions within that of a split go to both sides
          // (fixedPlaneMargin); the leaf then takes the best fit by slack-free residuals, so the overlap relocates
          // no point by the region test's slack
            ...(opts.precision === 'q15' || opts.precision === 'q31' ? { margin: Math.max(opts.treeOptions?.margin ?? 0, fixedPlaneMargin(table, opts.precision, opts.thetaFrac)), boundaryBothSides: true } : {}),
          }))
        : (opts.locator ??
          // a grid named by the caller is not held to the cost model's byte budget (as the plain tree)
          buildLocator(table, search, { ...opts.locatorOptions, ...(search === 'grid' ? { maxBytes: opts.locatorOptions?.maxBytes ?? Infinity } : {}), tableHash: hash }));
    if (search === 'grid' && !locator) throw new Error('no grid of 2 or more cells per coordinate fits the given byte budget');
    searchReason = [`${search} search, named by the caller (--search ${search}).`];
  }
  const arrays = built ?? target.build(table, opts.precision, search, locator, { thetaFrac: opts.thetaFrac, clamp: opts.clamp });
  const meta = { prefix: opts.prefix, table, tableHash: hash, mergedFrom: opts.mergedFrom, searchReason };
  const files = target.files(arrays, meta);
  const text = (ext: string) => files.find((f) => f.name === `${opts.prefix}${ext}`)?.text ?? '';
  const tree = locator && locator.format === TREE_FORMAT ? locator : null;
  return { target, files, header: text('.h'), source: text('.c'), arrays, search, tree, locator, candidates, searchReason, cost: target.cost(arrays), hash };
}

/**
 * C99 in float or double (the `c` target): header and source that evaluate the table law
 * u(0) = Fθ + g (−1 / no output outside every region), with the flat arrays, the tree used and the
 * cost figures (bytes, worst-case multiply-adds and comparisons). All new and owned by the caller.
 */
export function emitC(table: TableFile, opts: EmitOptions): EmitResult<EmitArrays> {
  return emit<EmitArrays>(table, { ...opts, lang: 'c' });
}

/** Parse a tree side file's text and check that it was built for this table (`path` names it in errors). */
export function parseTreeJson(text: string, path: string, table: TableFile, hash: string): SearchTree {
  let raw: unknown;
  try {
    raw = JSON.parse(text);
  } catch (e) {
    throw new InputError(path, '', `cannot read the search tree (${(e as Error).message})`);
  }
  const t = raw as SearchTree;
  if (!t || t.format !== TREE_FORMAT) throw new InputError(path, 'format', `expected "${TREE_FORMAT}"`);
  if (t.version !== TREE_VERSION) throw new InputError(path, 'version', `unsupported version ${JSON.stringify(t.version)}`);
  if (t.tableHash !== hash) throw new InputError(path, 'tableHash', `built for table ${t.tableHash}, not for this table (${hash})`);
  if (t.regionCount !== table.regions.length || t.ntheta !== table.dims.ntheta) throw new InputError(path, 'regionCount', 'does not match the table');
  return t;
}

