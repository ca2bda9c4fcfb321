/** Small helpers shared by the command files: option parsers and notices. */
import { InputError } from '../io/errors.js';

export const CLI = '(command line)';

/** The one spelling of a time budget in every command's help. */
export const SECONDS = '<seconds>';

export function positive(flag: string, integer: boolean) {
  return (v: string): number => {
    const x = Number(v);
    if (!Number.isFinite(x) || x <= 0 || (integer && !Number.isInteger(x)))
      throw new InputError(CLI, flag, `expected a positive ${integer ? 'integer' : 'number'}, got "${v}"`);
    return x;
  };
}

export function choice<T extends string>(flag: string, values: readonly T[]) {
  return (v: string): T => {
    if (!(values as readonly string[]).includes(v)) throw new InputError(CLI, flag, `expected one of ${values.join(', ')}, got "${v}"`);
    return v as T;
  };
}

/**
 * Tell the user that a missing output directory was created: on stdout with the command's summary,
 * or on stderr when stdout carries data (JSON).
 */
export function createdNote(dir: string, stream: 'stdout' | 'stderr' = 'stdout'): void {
  process[stream].write(`tessera: note: created the directory ${dir}\n`);
}
