import type { Command } from 'commander';
import { join } from 'node:path';
import { InputError } from '../io/errors.js';
import { writeFileAtomic } from '../io/atomic.js';
import { checkOutputPath } from '../io/output.js';
import { hasInputLimits } from '../table/clamp.js';
import { EXIT } from './exit.js';
import { createdNote } from './common.js';
import { readTableFile } from '../table/file.js';
import { SEARCH_CHOICES, type SearchChoice } from '../emit/index.js';
import { emitBundle, type EmitBundle } from '../emit/bundle.js';
import { readTreeFile } from '../emit/tree-file.js';
import { findTarget, targetLanguages, targetPrecisions, TARGETS } from '../emit/targets/index.js';
import type { TargetCost } from '../emit/targets/target.js';
import { CERTIFY_TOLERANCE_RULE } from '../check/certify.js';
import { targetCheck, targetCheckLines } from './target-check.js';
import { FixedOverflowError, type FixedBuild } from '../emit/fixed.js';

const CLI = '(command line)';

function choice<T extends string>(flag: string, values: readonly T[]) {
  return (v: string): T => {
    if (!(values as readonly string[]).includes(v)) throw new InputError(CLI, flag, `expected one of ${values.join(', ')}, got "${v}"`);
    return v as T;
  };
}

function intList(flag: string) {
  return (v: string): number[] => {
    const xs = v.split(',').map((x) => Number(x.trim()));
    if (!xs.length || xs.some((x) => !Number.isInteger(x))) throw new InputError(CLI, flag, `expected comma-separated integers, got "${v}"`);
    return xs;
  };
}

function positive(flag: string, integer: boolean) {
  return (v: string): number => {
    const x = Number(v);
    if (!Number.isFinite(x) || x <= 0 || (integer && !Number.isInteger(x)))
      throw new InputError(CLI, flag, `expected a positive ${integer ? 'integer' : 'number'}, got "${v}"`);
    return x;
  };
}

interface EmitCliOptions {
  lang: string;
  precision: string;
  search: SearchChoice;
  prefix: string;
  output: string;
  merge?: boolean;
  mergedTable?: string;
  report?: string;
  certify?: boolean;
  thetaFrac?: number[];
  targetCheck?: boolean;
  tolerance?: number;
  samples: number;
  seed: number;
  arrays?: 'json' | 'csv';
  selftest?: number;
  tree?: string;
  leafSize: number;
  clamp?: boolean;
  quiet?: boolean;
}

function bytesLine(cost: TargetCost): string {
  return Object.entries(cost.bytes)
    .map(([p, b]) => `${p} ${b.total} B`)
    .join(', ');
}

const LANGS = targetLanguages();
const PRECISIONS = [...new Set(LANGS.flatMap(targetPrecisions))];

/** One line per array: count and, per reported precision, element type and bytes. */
function arrayLines(c: TargetCost): string[] {
  const precs = Object.keys(c.bytes);
  return c.bytes[precs[0]].arrays.map(
    (a, k) =>
      `    ${a.name.padEnd(17)} ${String(a.count).padStart(7)} x ` +
      precs.map((p) => `${p} ${c.bytes[p].arrays[k].type.padEnd(8)} ${String(c.bytes[p].arrays[k].bytes).padStart(8)} B`).join('  '),
  );
}

/** Leaf sizes in words: the split target (--leaf-size) and why a leaf may hold more. */
function leafText(maxLeaf: number, target: number): string {
  const most = `at most ${maxLeaf} region${maxLeaf === 1 ? '' : 's'} per leaf`;
  return maxLeaf <= target
    ? `${most} (--leaf-size ${target})`
    : `${most} (--leaf-size ${target} is the split target; a leaf keeps more regions when no facet hyperplane separates them)`;
}

export function register(program: Command): void {
  program
    .command('emit')
    .description('generate embedded C (header + source) that evaluates the table, with a cost report and a float certificate')
    .argument('<table>', 'table file written by tessera solve')
    .option('--lang <lang>', `target language: ${TARGETS.map((t) => `${t.lang} (${t.precisions.join('/')}: ${t.summary})`).join('; ')}`, choice('--lang', LANGS), 'c')
    .option('--precision <p>', `arithmetic of the generated code: ${PRECISIONS.join(', ')}`, choice('--precision', PRECISIONS), 'float')
    .option(
      '--search <s>',
      'point location: auto (the cost model picks; default), tree (hyperplane tree, one region per leaf), capped (depth-capped hyperplane tree with short leaves), broad (the same tree stopped early: broad leaves, shorter descent), boxtree (bounding-box tree), grid (uniform cell grid over the box) or sequential',
      choice('--search', SEARCH_CHOICES),
      'auto',
    )
    .option('--prefix <name>', 'C name prefix: NAME.h, NAME.c, NAME_eval', 'tessera_law')
    .requiredOption('-o, --output <dir>', 'directory for the generated files')
    .option('--merge', 'merge regions with the same law whose union is convex before emitting')
    .option('--merged-table <file>', 'also write the merged table (implies --merge)')
    .option('--report <file>', 'write the cost report (and certificate) as JSON')
    .option('--clamp', "saturate u to the table's input limits (inputLimits) in the generated code (float/double); its comparisons count in the cost")
    .option('--certify', 'certify the emitted build against the double law of the table (float/double: that build in its precision; q15/q31: that build and its overflow proof); exit code 1 when NOT SAFE')
    .option('--target-check', 'also cross-compile float, q15 and q31 for Cortex-M0 and Cortex-M4F (arm-none-eabi-gcc): sizes, soft-float check, worst-case instructions/cycles')
    .option('--theta-frac <list>', 'fixed point: fraction bits of each θ, comma-separated (default: the most the box allows)', intList('--theta-frac'))
    .option('--tolerance <x>', `accepted max |u_build - u_table| for the certificate (default for float/double: ${CERTIFY_TOLERANCE_RULE})`, positive('--tolerance', false))
    .option('--samples <n>', 'uniform sample size of the certificate', positive('--samples', true), 20000)
    .option('--seed <n>', 'seed of the certificate and self-test points', positive('--seed', true), 1)
    .option('--arrays <fmt>', 'also write the raw arrays as json or csv', choice('--arrays', ['json', 'csv'] as const))
    .option('--selftest <n>', 'also write NAME_selftest.c, a host program checking n seeded points', positive('--selftest', true))
    .option('--tree <file>', 'reuse a search tree side file (must match the table)')
    .option('--leaf-size <n>', 'split tree leaves down to this many regions (a leaf keeps more when no facet hyperplane separates them)', positive('--leaf-size', true), 1)
    .option('-q, --quiet', 'print nothing but errors and warnings')
    .action((tablePath: string, o: EmitCliOptions) => {
      const target = findTarget(o.lang, o.precision);
      if (!target) throw new InputError(CLI, '--precision', `language ${o.lang} has no precision "${o.precision}" (expected one of ${targetPrecisions(o.lang).join(', ')})`);
      const bad = target.checkPrefix(o.prefix);
      if (bad) throw new InputError(CLI, '--prefix', `"${o.prefix}" ${bad}`);
      if (o.clamp && target.id === 'c-fixed') throw new InputError(CLI, '--clamp', `applies to the float and double builds, not to ${o.precision}`);
      // every output path is checked before any work
      const created = [checkOutputPath(o.output, '-o', { kind: 'directory' })];
      if (o.report) created.push(checkOutputPath(o.report, '--report', { kind: 'file', extensions: ['.json'], what: 'a JSON report' }));
      if (o.mergedTable) created.push(checkOutputPath(o.mergedTable, '--merged-table', { kind: 'file', extensions: ['.json'], what: 'a JSON table' }));
      // option combinations are checked before any work
      if (o.tree && o.search !== 'tree') throw new InputError(CLI, '--tree', 'a tree side file needs --search tree');
      const fixed = target.id === 'c-fixed';
      if (o.thetaFrac && !fixed) throw new InputError(CLI, '--theta-frac', `applies to the fixed-point precisions only (${targetPrecisions(o.lang).filter((p) => !['float', 'double'].includes(p)).join(', ')})`);
      // --target-check cross-builds every precision, fixed point included, which prints tree and sequential search only
      if (o.targetCheck && o.search !== 'auto' && o.search !== 'tree' && o.search !== 'sequential')
        throw new InputError(CLI, '--target-check', `cross-checks tree and sequential builds only, not --search ${o.search}`);
      const input = readTableFile(tablePath);
      if (input.regions.length === 0) throw new InputError(tablePath, 'regions', 'the table has no region: nothing to emit');
      // live progress on a terminal only; the summaries below give the final figures
      let shown = false;
      const live = (text: string) => {
        shown = true;
        process.stderr.write(text);
      };
      const endLive = () => {
        if (shown) process.stderr.write('\r\x1b[K');
        shown = false;
      };
      const tty = process.stderr.isTTY;
      let bundle: EmitBundle;
      try {
        bundle = emitBundle(input, {
          lang: o.lang,
          precision: o.precision,
          search: o.search,
          prefix: o.prefix,
          merge: o.merge,
          mergedTable: !!o.mergedTable,
          onMergeProgress: tty ? (p) => live(`\r  merging: ${p.groupsDone}/${p.groups} law groups, ${p.tests} union tests, ${p.elapsedSeconds.toFixed(1)} s`) : undefined,
          tree: o.tree
            ? (t, hash) => {
                endLive();
                return readTreeFile(o.tree!, t, hash);
              }
            : undefined,
          leafSize: o.leafSize,
          onTreeProgress: tty ? (p) => live(`\r  building tree: ${p.nodes} nodes, ${p.leaves} leaves so far, ${p.elapsedSeconds.toFixed(1)} s`) : undefined,
          thetaFrac: o.thetaFrac,
          clamp: o.clamp,
          searches: o.targetCheck ? ['tree', 'sequential'] : undefined,
          certify: o.certify ? { samples: o.samples, seed: o.seed, tolerance: o.tolerance } : undefined,
          arrays: o.arrays,
          selftest: o.selftest,
          seed: o.seed,
          tableFile: tablePath,
        });
      } catch (e) {
        endLive();
        // a scaling that would overflow is refused like any other bad input: one line, exit 2, nothing written
        if (e instanceof FixedOverflowError) throw new InputError(o.thetaFrac ? CLI : tablePath, o.thetaFrac ? '--theta-frac' : 'regions', e.message);
        throw e;
      }
      endLive();
      const { table, result: res, certificate: cert, fixedCertificate: fcert, treeFile } = bundle;
      const before = bundle.regionsBefore;
      const merged = bundle.merge !== null;
      const incomplete = input.stats?.complete === false;
      if (bundle.merge) {
        const m = bundle.merge;
        process.stderr.write(`merge: ${m.before} regions -> ${m.after} (${m.tests} union tests${m.undecided ? `, ${m.undecided} undecided, left apart` : ''})\n`);
      }
      if (o.clamp && !hasInputLimits(input.inputLimits, input.dims.nu))
        process.stderr.write(`tessera: warning: ${tablePath} has no finite input limit; --clamp changes nothing\n`);
      const tcheck = o.targetCheck ? targetCheck(table, res.search, res.tree, o.prefix) : null;
      if (tcheck) bundle.report.targetCheck = tcheck;
      const writes: [string, string][] = [];
      if (o.mergedTable) writes.push([o.mergedTable, bundle.mergedTableJson!]);
      for (const f of bundle.files) writes.push([join(o.output, f.name), f.text]);
      if (o.report) writes.push([o.report, JSON.stringify(bundle.report, (_k, v) => (typeof v === 'bigint' ? v.toString() : v), 1) + '\n']);
      // everything is computed before the first write, so a failure leaves no partial output
      for (const [p, text] of writes) writeFileAtomic(p, text);
      if ((cert && !cert.safe) || (fcert && !fcert.safe) || (tcheck && !tcheck.noSoftFloat)) process.exitCode = EXIT.found;
      if (o.quiet) return;
      for (const d of created) if (d) createdNote(d);

      const c = res.cost;
      const lines = [
        `emit: ${res.files.map((f) => f.name).join(', ')} in ${o.output} (${target.summary}; ${o.precision}, ${res.search} search${o.search === 'auto' ? ', chosen by the cost model' : ''}${o.clamp ? ', u clamped to the input limits' : ''})`,
        ...(treeFile ? [`  also ${treeFile} in ${o.output}: the search tree, for reuse with --tree (not needed by the C code)`] : []),
        `  regions: ${merged ? `${before} -> ${table.regions.length} after merging` : before}${incomplete ? '  [INCOMPLETE TABLE: exploration stopped early]' : ''}`,
        res.search === 'tree'
          ? `  tree: depth ${c.worstDepth} (2*log2(regions) = ${(2 * Math.log2(table.regions.length)).toFixed(1)}), ${res.tree!.stats.nodes} nodes, ${res.tree!.stats.leaves} leaves, ${leafText(res.tree!.stats.maxLeafSize, o.leafSize)}`
          : res.locator
            ? `  ${res.search}: depth ${c.worstDepth} (2*log2(regions) = ${(2 * Math.log2(table.regions.length)).toFixed(1)}), ${res.locator.stats.nodes} nodes, ${res.locator.stats.leaves} leaves, at most ${res.locator.stats.maxLeafSize} regions per leaf`
            : '  sequential search over every region',
        ...(o.search === 'auto' ? res.searchReason.slice(1).map((l) => `    ${l}`) : []),
        `  worst case per evaluation: ${c.worstMultiplyAdds} multiply-adds, ${c.worstComparisons} comparisons${c.clampComparisons ? ` (${c.clampComparisons} of them for --clamp)` : ''}`,
        `  memory: ${bytesLine(c)}`,
        ...arrayLines(c),
      ];
      if (fixed) {
        const b = res.arrays as FixedBuild;
        lines.push(
          `  scaling: theta_q[j] = round(theta[j] * 2^frac[j]), frac = [${b.thetaFrac.join(', ')}]; u = u_q * 2^-${b.uFrac}; shifts: tree ${b.nodeShift}, regions ${b.regionShift}, laws ${b.lawShift}`,
          `  overflow proof: ${b.proof.text}`,
        );
      }
      if (fcert) {
        lines.push(
          `  ${fcert.precision} certificate on ${fcert.points.total} points (${fcert.points.sample} uniform, ${fcert.points.facet} at facets): max |u_fixed - u_double| = ${fcert.maxAbsDiff.toPrecision(3)} ` +
            `(same region ${fcert.maxAbsDiffSameRegion.toPrecision(3)}, proven bound ${fcert.lawErrorBound.toPrecision(3)}), ${fcert.relocated} relocated (largest law difference ${fcert.relocatedMaxLawDiff.toPrecision(3)}), ${fcert.lostInFixed} lost in fixed point`,
          `  ${fcert.verdict}`,
        );
      }
      if (cert) {
        lines.push(
          `  ${cert.precision} certificate on ${cert.points.total} points (${cert.points.sample} uniform, ${cert.points.facet} at facets): max |u_build - u_table| = ${cert.maxAbsDiff.toPrecision(3)}, ` +
            `${cert.relocated} relocated (largest law difference ${cert.relocatedMaxLawDiff.toPrecision(3)}), ${cert.lostInFloat} lost in ${cert.precision}`,
          `  ${cert.verdict}`,
          `  a-priori float bounds: rounding theta ${cert.bounds.inputRounding.toPrecision(3)} (region ${cert.bounds.inputRoundingAt.region}, gain ${cert.bounds.inputRoundingAt.gain.toPrecision(4)}), region overlap ${cert.bounds.overlap.toPrecision(3)}` +
            (cert.bounds.overlapAt ? ` (region ${cert.bounds.overlapAt.region} facet ${cert.bounds.overlapAt.facet} to ${cert.bounds.overlapAt.neighbour}, law jump ${cert.bounds.overlapAt.jump.toPrecision(4)} x rounding window ${cert.bounds.overlapAt.window.toPrecision(3)})` : ''),
          ...(cert.diagnosis ? [`  diagnosis: ${cert.diagnosis}`] : []),
        );
      }
      if (tcheck) lines.push(...targetCheckLines(tcheck));
      lines.push('  caution: validate in simulation and hardware-in-the-loop, keep an independent safety layer, and handle the -1 (no region) return.');
      process.stdout.write(lines.join('\n') + '\n');
    });
}
