/** Problem files on disk (Node only); the pure parse/validate lives in read.ts. */
import { readFileSync } from 'node:fs';
import { InputError } from '../io/input-error.js';
import { parseProblemText } from './read.js';
import type { LoadedProblem } from './types.js';

/** Read a problem file (JSON; `.yaml`/`.yml` through the `yaml` package) and validate it. */
export function loadProblem(path: string): LoadedProblem {
  let text: string;
  try {
    text = readFileSync(path, 'utf8');
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code ?? String(e);
    throw new InputError(path, '', `cannot read the problem file (${code})`);
  }
  return parseProblemText(text, path);
}
