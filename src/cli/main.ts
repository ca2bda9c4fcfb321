#!/usr/bin/env node
import { Command, CommanderError } from 'commander';
import { InputError } from '../io/errors.js';
import { EXIT, EXIT_CODES_HELP } from './exit.js';
import { register as registerSolve } from './solve.js';
import { register as registerJoin } from './join.js';
import { register as registerEvaluate } from './evaluate.js';
import { register as registerEmit } from './emit.js';
import { register as registerMap } from './map.js';
import { register as registerGaps } from './gaps.js';
import { register as registerView } from './view.js';
import { register as registerSimulate } from './simulate.js';
import { register as registerAudit } from './audit.js';

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

for (const reg of [registerSolve, registerJoin, registerEvaluate, registerEmit, registerMap, registerGaps, registerView, registerSimulate, registerAudit]) reg(program);

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
