import { readFileSync } from 'node:fs';
import { InputError } from './input-error.js';

// InputError lives in a pure module so that the core (and the browser bundle) can throw it too.
export { InputError } from './input-error.js';

/** The bytes of an input file (`readTextInput`'s errors), for readers that scan bytes themselves. */
export function readBytesInput(path: string, what: string): Uint8Array {
  try {
    return readFileSync(path);
  } catch (e) {
    throw new InputError(path, '', `cannot read ${what} (${(e as NodeJS.ErrnoException).code ?? 'error'})`);
  }
}

/** Read a text input file; a failure is an InputError naming the file and what it was for. */
export function readTextInput(path: string, what: string): string {
  try {
    return readFileSync(path, 'utf8');
  } catch (e) {
    throw new InputError(path, '', `cannot read ${what} (${(e as NodeJS.ErrnoException).code ?? 'error'})`);
  }
}
