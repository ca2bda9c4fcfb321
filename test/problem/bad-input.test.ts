import { mkdtempSync, writeFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { InputError } from '../../src/io/errors.js';
import { loadProblem, parseProblem } from '../../src/problem/index.js';
import { badCases, baseProblem } from './bad-cases.js';

const dir = mkdtempSync(join(tmpdir(), 'tessera-bad-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('problem validation: bad-input catalogue', () => {
  it('the base problem of the catalogue is itself valid', () => {
    const { model } = parseProblem(baseProblem(), 'base.json');
    expect(model.thetaNames).toEqual(['x1', 'x2', 'u1_prev']);
  });

  it('has at least 20 cases', () => {
    expect(badCases.length).toBeGreaterThanOrEqual(20);
  });

  badCases.forEach((c, i) => {
    it(`rejects: ${c.title}`, () => {
      const file = join(dir, `case${i}${c.ext}`);
      writeFileSync(file, c.text);
      let err: unknown = null;
      try {
        loadProblem(file);
      } catch (e) {
        err = e;
      }
      expect(err).toBeInstanceOf(InputError);
      const ie = err as InputError;
      expect(ie.file).toBe(file);
      expect(ie.key).toBe(c.key);
      expect(ie.reason).toMatch(c.reason);
      expect(ie.exitCode).toBe(2);
      expect(ie.message).toBe(`${file}: ${c.key}: ${ie.reason}`);
      expect(ie.message).not.toContain('\n');
    });
  });

  it('a missing file is an InputError naming the file', () => {
    expect(() => loadProblem(join(dir, 'nope.json'))).toThrow(/nope\.json: cannot read the problem file \(ENOENT\)/);
  });

  it('did-you-mean hints come from the edit distance, not a fixed table', () => {
    const p = baseProblem();
    p.weights.inptRate = p.weights.inputRate;
    delete p.weights.inputRate;
    expect(() => parseProblem(p, 'f.json')).toThrow(/weights\.inptRate: unknown key "inptRate"; did you mean "inputRate"\?/);
    const q = baseProblem();
    q.zzzzzzzz = 1;
    expect(() => parseProblem(q, 'f.json')).toThrow(/unknown key "zzzzzzzz"; allowed here: name, description/);
  });
});
