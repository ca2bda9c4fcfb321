import { readFileSync } from 'node:fs';

/**
 * A user-facing input error: one line naming the file, the key path and the reason.
 * The CLI prints `message` and exits with `exitCode` (2 for bad input).
 */
export class InputError extends Error {
  readonly file: string;
  readonly key: string;
  readonly reason: string;
  readonly exitCode: number;
  constructor(file: string, key: string, reason: string, exitCode = 2) {
    super(`${file}: ${key ? key + ': ' : ''}${reason}`);
    this.name = 'InputError';
    this.file = file;
    this.key = key;
    this.reason = reason;
    this.exitCode = exitCode;
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
