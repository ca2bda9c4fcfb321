/**
 * A user-facing input error: one line naming the file, the key path and the reason.
 * The CLI prints `message` and exits with `exitCode` (2 for bad input). Pure (no `node:*`), so the
 * core and the browser bundle throw the same error as the CLI.
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
