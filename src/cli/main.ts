#!/usr/bin/env node
import { Command } from 'commander';
import { InputError } from '../io/errors.js';
import { register as registerSolve } from './solve.js';
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
  .version('0.1.0');

for (const reg of [registerSolve, registerEvaluate, registerEmit, registerMap, registerGaps, registerView, registerSimulate, registerAudit]) reg(program);

program.parseAsync(process.argv).catch((err: unknown) => {
  if (err instanceof InputError) {
    process.stderr.write(`tessera: ${err.message}\n`);
    process.exit(err.exitCode);
  }
  const msg = err instanceof Error ? err.message : String(err);
  process.stderr.write(`tessera: internal error: ${msg}\n`);
  if (process.env.TESSERA_DEBUG && err instanceof Error) process.stderr.write(`${err.stack}\n`);
  process.exit(3);
});
