/// <reference path="../types/mathjs-bundle.d.ts" />
import type * as MathJs from 'mathjs';
// the single-file bundle of the same package and version: the many-module entry point costs seconds
// of start-up on every CLI run, the bundle ≈ 60 ms; an ES import keeps the core free of node:module
import bundle from 'mathjs/lib/browser/math.js';

/** mathjs (off the hot path only: ZOH matrix exponential, eigenvalue checks of the problem reader). */
export function mathjs(): typeof MathJs {
  return bundle;
}
