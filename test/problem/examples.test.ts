import { readdirSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { loadProblem } from '../../src/problem/index.js';
import { buildRawMpqp } from '../../src/formulation/index.js';
import { qpReference } from '../helpers/reference.js';

const root = join(import.meta.dirname, '..', '..');
const allExampleFiles = readdirSync(join(root, 'examples')).filter((f) => /\.(json|ya?ml)$/.test(f)).map((f) => join(root, 'examples', f));
// MPC examples (an mpqp example has no plant; it is checked in test/formulation/mpqp.test.ts)
const exampleFiles = allExampleFiles.filter((f) => loadProblem(f).model !== null);
const fixtureDir = join(root, 'test', 'fixtures', 'problems');
const fixture = (name: string) => loadProblem(join(fixtureDir, `${name}.json`));

describe('shipped example problems', () => {
  it('at least four examples, one YAML, one continuous-time', () => {
    expect(exampleFiles.length).toBeGreaterThanOrEqual(4);
    expect(exampleFiles.some((f) => /\.ya?ml$/.test(f))).toBe(true);
    const raws = exampleFiles.map((f) => loadProblem(f).raw as Record<string, any>);
    expect(raws.some((r) => r.plant.timeDomain === 'continuous')).toBe(true);
  });

  it.each(exampleFiles)('%s: has name and description, dims as documented, origin is an interior equilibrium', (file) => {
    const { raw, model } = loadProblem(file);
    const r = raw as Record<string, unknown>;
    expect(typeof r.name).toBe('string');
    expect(typeof r.description).toBe('string');
    expect(model.box.lower.length).toBe(model.thetaNames.length);
    expect(model.thetaNames.length).toBeGreaterThanOrEqual(2);
    expect(model.thetaNames.length).toBeLessThanOrEqual(4);
    const q = buildRawMpqp(model);
    // online QP at θ = 0 by quadprog (Goldfarb–Idnani dual method): feasible with z = 0 since no limit binds at rest
    const ref = qpReference(q, new Array(q.ntheta).fill(0));
    expect(ref.feasible).toBe(true);
    for (const v of ref.z) expect(Math.abs(v)).toBeLessThan(1e-9);
    expect(model.lqrGain).not.toBeNull();
  });
});

describe('test fixture problems', () => {
  it('scalar-saturated: the one-step law is the unconstrained gain clipped at ±ū (analytic solution)', () => {
    const { model } = fixture('scalar-saturated');
    const [a, b, q, r] = [model.A[0][0], model.B[0][0], model.Q[0][0], model.R[0][0]];
    const ubar = model.constraints.input!.upper[0]!;
    expect(model.constraints.input!.lower[0]).toBe(-ubar);
    const mp = buildRawMpqp(model);
    // J = q x² + r u² + q (a x + b u)²  ⇒  u* = −q a b x / (r + q b²), then clipped (convex scalar QP)
    for (const x of [-3, -1.2, -0.4, 0, 0.3, 0.9, 2.5]) {
      const ref = qpReference(mp, [x]);
      expect(ref.feasible).toBe(true);
      const uFree = (-q * a * b * x) / (r + q * b * b);
      expect(ref.z[0]).toBeCloseTo(Math.max(-ubar, Math.min(ubar, uFree)), 9);
    }
  });

  it('continuous-lag: ZOH of τ = 2, K = 1.5 at T = 0.25 (first-order lag, handbook formula)', () => {
    const { model } = fixture('continuous-lag');
    expect(model.A[0][0]).toBeCloseTo(Math.exp(-0.125), 12);
    expect(model.B[0][0]).toBeCloseTo(1.5 * (1 - Math.exp(-0.125)), 12);
  });

  it('rate-limited: θ = [x; u_prev] and rate rows exist for every step', () => {
    const { model } = fixture('rate-limited');
    expect(model.hasRate).toBe(true);
    expect(model.thetaNames).toEqual(['x1', 'u1_prev']);
    const labels = buildRawMpqp(model).labels.filter((l) => l.startsWith('du1('));
    expect(labels.length).toBe(2 * model.N);
  });

  it('short-control-horizon: Nu < N gives nz = Nu·m', () => {
    const { model } = fixture('short-control-horizon');
    expect(model.Nu).toBeLessThan(model.N);
    expect(buildRawMpqp(model).nz).toBe(model.Nu * model.m);
  });

  it('licq-degenerate: duplicated input rows and an output row equal to a state row are really present', () => {
    const { model } = fixture('licq-degenerate');
    const q = buildRawMpqp(model);
    const row = (label: string) => {
      const i = q.labels.indexOf(label);
      expect(i, label).toBeGreaterThanOrEqual(0);
      return [...q.G.slice(i * q.nz, (i + 1) * q.nz), ...q.E.slice(i * q.ntheta, (i + 1) * q.ntheta), q.w[i]];
    };
    expect(row('u1(2) <= 1')).toEqual(row('u1(0) <= 1'));
    expect(row('u1(1) >= -1')).toEqual(row('u1(0) >= -1'));
    for (let k = 1; k <= model.N; k++) expect(row(`y1(${k}) <= 2`)).toEqual(row(`x1(${k}) <= 2`));
    // one free move but several rows can bind together: more rows than decision variables
    expect(q.nc).toBeGreaterThan(4 * q.nz);
  });
});
