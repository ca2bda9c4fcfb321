#!/usr/bin/env node
import { Command, CommanderError } from 'commander';
import { InputError } from '../io/errors.js';
import { EXIT, EXIT_CODES_HELP } from './exit.js';

type Register = (program: Command) => void;
/**
 * Every command's module, in the order of the help listing. Only the named command's module is
 * loaded when the first argument names one: the others pull in the solver, d3, mathjs and yaml,
 * which cost most of a second of start-up (a cold `tessera evaluate` of 10⁶ points is ~2 s in all).
 * Anything else (no command, `help`, a misspelt command) loads them all, for the listing and the
 * suggestion.
 */
const COMMANDS: [string, () => Promise<{ register: Register }>][] = [
  ['solve', () => import('./solve.js')],
  ['join', () => import('./join.js')],
  ['evaluate', () => import('./evaluate.js')],
  ['emit', () => import('./emit.js')],
  ['map', () => import('./map.js')],
  ['gaps', () => import('./gaps.js')],
  ['view', () => import('./view.js')],
  ['simulate', () => import('./simulate.js')],
  ['audit', () => import('./audit.js')],
];

const program = new Command();
program
  .name('tessera')
  .description(
    'Explicit MPC: turn a plant model, weights and limits into a verified lookup table of affine laws over critical regions.',
  )
  .version('0.1.0')
  // parser errors (unknown option or command, missing argument) are usage errors: exit 2, one line,
  // never exit 1, which means "the check found a problem" (set before the commands so they inherit it)
  .exitOverride()
  .configureOutput({ outputError: () => undefined })
  .showSuggestionAfterError(true)
  .addHelpText('after', `\n${EXIT_CODES_HELP}`);

const named = COMMANDS.find(([name]) => name === process.argv[2]);
for (const [, load] of named ? [named] : COMMANDS) (await load()).register(program);

program.parseAsync(process.argv).catch((err: unknown) => {
  if (err instanceof CommanderError) {
    // help and version end with exit 0; `tessera` alone prints the help and is a usage error
    if (err.exitCode === 0) process.exit(EXIT.ok);
    if (err.code === 'commander.help') process.exit(EXIT.usage);
    const msg = err.message.replace(/^error: /, '').replace(/\s*\n\s*/g, ' ');
    process.stderr.write(`tessera: (command line): ${msg}\n`);
    process.exit(EXIT.usage);
  }
  if (err instanceof InputError) {
    process.stderr.write(`tessera: ${err.message}\n`);
    process.exit(err.exitCode);
  }
  const msg = err instanceof Error ? err.message : String(err);
  process.stderr.write(`tessera: internal error: ${msg}\n`);
  if (process.env.TESSERA_DEBUG && err instanceof Error) process.stderr.write(`${err.stack}\n`);
  process.exit(EXIT.internal);
});
