import { createRequire } from 'node:module';
import type * as MathJs from 'mathjs';

const require = createRequire(import.meta.url);
let cached: typeof MathJs | null = null;

/**
 * mathjs, loaded on first use from its single-file bundle (same package and version): the
 * many-module entry point costs seconds of start-up on every CLI run, the bundle a fraction of that.
 */
export function mathjs(): typeof MathJs {
  return (cached ??= require('mathjs/lib/browser/math.js') as typeof MathJs);
}
