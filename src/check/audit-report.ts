/**
 * The audit report as a self-contained HTML page (no script, no external resource: figures are
 * SVG data URIs), as Markdown text, and as a one-line-per-check console summary.
 */
import { esc } from '../plot/svg.js';
import { auditChecks, fmtTheta, type AuditReport, type CheckResult } from './audit.js';

export interface AuditFigure {
  title: string;
  svg: string;
  /** how the figure was made */
  method: string;
  /** where its data came from */
  source: string;
}

export const SAFETY_CAUTION =
  'A controller drives equipment and can hurt people. This report is evidence for an engineering review, not a certification. ' +
  'Validate the controller in simulation and in hardware-in-the-loop before it touches a plant; keep an independent safety layer ' +
  '(hard limits, interlocks, watchdog) that does not depend on the table; decide and test what the firmware does when θ lies outside every region; ' +
  'and defer to the codes, standards and licensed engineering practice that apply to your equipment. The checks hold for the nominal model only.';

const fmt = (v: number) => (Number.isFinite(v) ? Number(v.toPrecision(4)).toString() : String(v));

function rows(pairs: [string, string][]): string {
  return `<table class="kv">${pairs.map(([k, v]) => `<tr><th>${esc(k)}</th><td>${esc(v)}</td></tr>`).join('')}</table>`;
}

function details(r: AuditReport, c: CheckResult<unknown>): string {
  const names = r.identity.data.theta.flatMap((b) => b.names);
  if (c === r.identity) {
    const d = r.identity.data;
    return (
      rows([
        ['table', d.name],
        ['problem hash (recorded)', d.problemHash],
        ['problem hash (recomputed)', d.recomputedHash],
        ...(d.problemFileHash ? ([['--problem file hash', d.problemFileHash]] as [string, string][]) : []),
        ['formulation', `${d.formulation}${d.features.length ? ` (${d.features.join(', ')})` : ''}`],
        ['law', d.law.join(', ')],
        ['complete', d.complete ? 'yes' : `NO (${d.stopReason})`],
        ['regions', String(d.regions)],
        ['tool version', `tessera ${d.toolVersion}, table format version ${d.tableVersion}`],
        ['tolerances', Object.entries(d.tolerances).map(([k, v]) => `${k}=${v}`).join(', ')],
      ]) +
      `<table class="grid"><tr><th>θ block</th><th>entries</th><th>box lower</th><th>box upper</th></tr>${d.theta
        .map((b) => `<tr><td>${esc(b.kind)}</td><td>${esc(b.names.join(', '))}</td><td>${esc(b.lower.map(fmt).join(', '))}</td><td>${esc(b.upper.map(fmt).join(', '))}</td></tr>`)
        .join('')}</table>`
    );
  }
  if (c === r.agreement) {
    const d = r.agreement.data;
    return rows([
      ['points compared', String(d.compared)],
      ['max |Δu|', `${fmt(d.maxAbsDiff)} at ${fmtTheta(names, d.maxTheta)}`],
      ['tolerance', fmt(d.tolerance)],
      ['above the tolerance', String(d.overTolerance)],
      ['law given where the online QP is infeasible', String(d.tableOnly)],
      ['just outside the feasible set, held by a region within the location slack', String(d.tableOnlyBoundary)],
      ['online QP and feasibility LP feasible, no region', `${d.onlineOnly}${d.firstOnlineOnly ? ` (first ${fmtTheta(names, d.firstOnlineOnly)})` : ''}`],
      ['just outside the feasible set, accepted by quadprog within its tolerance', String(d.onlineOnlyBoundary)],
      ['facet points outside the parameter box (skipped)', String(d.outsideBox)],
    ]);
  }
  if (c === r.coverage) {
    const d = r.coverage.data;
    const mc = d.monteCarlo;
    const p = (f: { fraction: number; stderr: number }) => `${(100 * f.fraction).toFixed(3)} % ± ${(100 * f.stderr).toFixed(3)} %`;
    const pairs: [string, string][] = [
      ['Monte Carlo', `${mc.samples} points, seed ${mc.seed}`],
      ['covered', p(mc.covered)],
      ['infeasible', p(mc.infeasible)],
      ['holes', `${p(mc.holes)}${mc.holes.count === 0 ? ` (none hit; 95 % upper bound ${(100 * mc.holes.upper95).toFixed(3)} %)` : ''}`],
      ['facet probes', `${d.facetProbes.facets} facets, ${d.facetProbes.holes} in a hole`],
    ];
    if (d.exact2d) pairs.push(['exact 2-D areas', `covered ${fmt(d.exact2d.areas.covered)}, infeasible ${fmt(d.exact2d.areas.infeasible)}, holes ${fmt(d.exact2d.areas.holes)} in ${d.exact2d.holeComponents} component(s)`]);
    d.witnesses.forEach((w, i) => pairs.push([`hole witness ${i + 1}`, `${fmtTheta(names, w.theta)} (${w.source}${w.fromRegion !== undefined ? `, across a facet of region ${w.fromRegion}` : ''})`]));
    return rows(pairs);
  }
  if (c === r.invariance) {
    const d = r.invariance.data;
    const head = rows([
      ['regions', String(d.regions)],
      ['facets of the covered set', `${d.facets.total} (${d.facets.boundary} feasible-set boundary, ${d.facets.box} box faces; ${d.facets.skipped} on held entries skipped; ${d.facets.unconfirmed} without neighbours but not bounding, dropped)`],
      ['LPs solved', `${d.lps} (+ ${d.confirmLps} confirming the facets)`],
      ['regions that can leave', String(d.leaving.length)],
      ['verdict', d.proven ? 'PROVEN recursively feasible for the nominal model' : d.leaving.length ? 'NOT recursively feasible: witnesses below' : 'not proven (table incomplete)'],
    ]);
    if (!d.leaving.length) return head;
    return (
      head +
      `<table class="grid"><tr><th>region</th><th>witness θ</th><th>successor θ⁺</th><th>first limit crossed</th><th>excess</th></tr>${d.leaving
        .slice(0, 40)
        .map((l) => `<tr><td>${l.region}</td><td>${esc(fmtTheta(names, l.witness))}</td><td>${esc(fmtTheta(names, l.successor))}</td><td>${esc(l.facet)}</td><td>${fmt(l.excess)}</td></tr>`)
        .join('')}</table>${d.leaving.length > 40 ? `<p>… and ${d.leaving.length - 40} more.</p>` : ''}`
    );
  }
  if (c === r.stability) {
    const d = r.stability.data;
    return rows([
      ['points', `${d.points} (${d.sample} sampled, ${d.vertices} region vertices)`],
      ['successor in no region (left to invariance)', String(d.successorOutside)],
      ['worst J*(θ⁺) − J*(θ) + ℓ, relative to 1 + J*', `${fmt(d.worst)} at ${fmtTheta(names, d.worstTheta)}`],
      ['points above the tolerance', `${d.violations} (tolerance ${d.tolerance})`],
      ['J* pairs from the online QP (the stored quadratic cannot resolve them)', String(d.recomputed ?? 0)],
      ['terminal weight / terminal set', `${d.terminalWeight} / ${d.terminalSet ? 'invariant set' : 'none'}`],
    ]);
  }
  if (c === r.embedded) {
    const d = r.embedded.data;
    return rows([
      ['build', `${d.precision}, ${d.search} search${d.searchRequested === 'auto' ? ' (picked by the cost model, --search auto)' : ''}`],
      ['certificate', d.certificate ? d.certificate.verdict : 'not needed for the double build'],
      ['worst-case multiply-adds', String(d.cost.worstMultiplyAdds)],
      ['worst-case comparisons', String(d.cost.worstComparisons)],
      ['tree depth', String(d.cost.worstDepth)],
      ['array bytes', String(d.cost.bytes)],
    ]);
  }
  const d = r.closedLoop.data;
  const s = d.summary;
  return rows([
    ['runs', `${s.runs} × ${s.steps} steps (${d.vertices.covered} of ${d.vertices.total} box vertices covered, ${d.sampleRuns} sampled)`],
    ['hard-limit violations', `${s.violations}${s.violationsByLimit.length ? ` (${s.violationsByLimit.map((v) => `${v.limit}: ${v.count}`).join('; ')})` : ''}`],
    ['steps with no region', String(s.noRegionSteps)],
    ['max |Δu| table vs online QP', fmt(s.maxDu)],
    ['steady-state offset', s.offset.length ? s.offset.map((o) => `${o.output} ${fmt(o.maxAbs)}`).join(', ') : 'no tracked output'],
    ['settled', `${s.settled}/${s.runs}${s.maxSettlingStep !== null ? `, slowest at step ${s.maxSettlingStep}` : ''}`],
  ]);
}

const svgUri = (svg: string) => `data:image/svg+xml;charset=utf-8,${encodeURIComponent(svg)}`;

function figureHtml(f: AuditFigure): string {
  return `<figure><img alt="${esc(f.title)}" src="${svgUri(f.svg)}"/><figcaption><b>${esc(f.title)}.</b> Method: ${esc(f.method)} Source: ${esc(f.source)}</figcaption></figure>`;
}

/** The audit report as one self-contained HTML page (figures inlined as SVG strings). */
export function renderAuditHtml(r: AuditReport, figures: { coverage: AuditFigure[]; closedLoop: AuditFigure[] }): string {
  const checks = auditChecks(r);
  const badge = (v: string) => `<span class="v ${v === 'PASS' ? 'pass' : v === 'INFO' ? 'info' : 'fail'}">${v}</span>`;
  const section = (c: CheckResult<unknown>, i: number) => {
    const figs = c === r.coverage ? figures.coverage : c === r.closedLoop ? figures.closedLoop : [];
    return `<section id="check-${i + 1}"><h2>${i + 1}. ${esc(c.name)} ${badge(c.verdict)}</h2><p class="line">${esc(c.line)}</p>${
      c.witness ? `<p class="witness">θ witness: ${esc(fmtTheta(r.identity.data.theta.flatMap((b) => b.names), c.witness))}</p>` : ''
    }<p class="method"><b>Method and source.</b> ${esc(c.method)}</p>${details(r, c)}${figs.map(figureHtml).join('')}</section>`;
  };
  return `<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>tessera audit: ${esc(r.identity.data.name)}</title>
<style>
body{font-family:"DejaVu Sans","Liberation Sans",Arial,sans-serif;font-size:14px;color:#1e1e1e;max-width:1000px;margin:24px auto;padding:0 16px;line-height:1.45}
h1{font-size:22px;margin-bottom:4px}h2{font-size:17px;margin-top:28px;border-bottom:1px solid #ccc;padding-bottom:4px}
.v{display:inline-block;padding:1px 8px;border-radius:3px;font-size:13px;font-weight:bold;color:#fff;margin-left:6px}.pass{background:#1b7a2e}.fail{background:#b00020}.info{background:#5a6470}
table{border-collapse:collapse;margin:8px 0}th,td{border:1px solid #ddd;padding:3px 8px;text-align:left;vertical-align:top;font-size:13px}th{background:#f5f5f5}
.kv th{width:300px}.caution{border:2px solid #b00020;padding:10px 14px;background:#fff5f5}.method{color:#444}.witness{font-family:monospace}
figure{margin:12px 0}figure img{max-width:100%;border:1px solid #ddd}figcaption{font-size:12.5px;color:#444}
#overall{font-size:16px;font-weight:bold}
</style></head><body>
<h1>Audit of table “${esc(r.identity.data.name)}”</h1>
<p>File: ${esc(r.table)} · tessera ${esc(r.identity.data.toolVersion)} · problem ${esc(r.identity.data.problemHash)}</p>
<p id="overall">Overall: ${badge(r.passed ? 'PASS' : 'FAIL')} ${r.passed ? 'no check failed (INFO lines are evidence without a pass/fail criterion)' : `${checks.filter((c) => c.verdict === 'FAIL').length} check(s) failed`}</p>
<div class="caution"><b>Safety.</b> ${esc(SAFETY_CAUTION)}</div>
<table id="verdicts"><tr><th>check</th><th>verdict</th><th>finding</th></tr>${checks
    .map((c, i) => `<tr><td><a href="#check-${i + 1}">${i + 1}. ${esc(c.name)}</a></td><td>${badge(c.verdict)}</td><td>${esc(c.line)}</td></tr>`)
    .join('')}</table>
${checks.map(section).join('\n')}
<p class="method">Written by <code>tessera audit</code>. Every number above was computed from the table file and its problem; seeds are stated beside each sample, so a rerun gives the same report.</p>
</body></html>
`;
}

/** The audit report as Markdown: one section per check with verdict, line, method and witness. */
export function renderAuditMarkdown(r: AuditReport): string {
  const names = r.identity.data.theta.flatMap((b) => b.names);
  const checks = auditChecks(r);
  const out = [
    `# Audit of table "${r.identity.data.name}"`,
    '',
    `File: ${r.table} · tessera ${r.identity.data.toolVersion} · problem ${r.identity.data.problemHash}`,
    '',
    `**Overall: ${r.passed ? 'PASS' : 'FAIL'}**`,
    '',
    `> **Safety.** ${SAFETY_CAUTION}`,
    '',
    '| check | verdict | finding |',
    '| --- | --- | --- |',
    ...checks.map((c, i) => `| ${i + 1}. ${c.name} | ${c.verdict} | ${c.line.replace(/\|/g, '\\|')} |`),
    '',
  ];
  checks.forEach((c, i) => {
    out.push(`## ${i + 1}. ${c.name}: ${c.verdict}`, '', c.line, '');
    if (c.witness) out.push(`θ witness: ${fmtTheta(names, c.witness)}`, '');
    out.push(`Method and source: ${c.method}`, '');
  });
  return out.join('\n');
}

export function consoleSummary(r: AuditReport): string {
  return (
    auditChecks(r)
      .map((c) => `  ${c.verdict}  ${c.name}: ${c.line}`)
      .join('\n') + `\n  overall: ${r.passed ? 'PASS' : 'FAIL'}\n`
  );
}
