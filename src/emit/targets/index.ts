/**
 * The registry of emit targets. `--lang` accepts exactly the languages listed here; within a
 * language the precision picks the printer (C: float/double or fixed point).
 */
import type { EmitTarget } from './target.js';
import { cTarget } from './c.js';
import { cFixedTarget } from './c-fixed.js';

export const TARGETS: readonly EmitTarget<any>[] = [cTarget, cFixedTarget]; // eslint-disable-line @typescript-eslint/no-explicit-any

/** Languages that have at least one target, in registry order. */
export function targetLanguages(): string[] {
  return [...new Set(TARGETS.map((t) => t.lang))];
}

/** Every precision some target of `lang` accepts. */
export function targetPrecisions(lang: string): string[] {
  return [...new Set(TARGETS.filter((t) => t.lang === lang).flatMap((t) => t.precisions))];
}

/** The target for a language and precision, or null when none exists. */
export function findTarget(lang: string, precision: string): EmitTarget<any> | null { // eslint-disable-line @typescript-eslint/no-explicit-any
  return TARGETS.find((t) => t.lang === lang && t.precisions.includes(precision)) ?? null;
}
