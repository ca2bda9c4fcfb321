/**
 * `npm run bench`: runs every test/bench/*.bench.ts (each exports `run()` and prints its own
 * numbers) one after another in this process, never inside `npm test`.
 * `npm run bench -- engine` runs only the files whose name contains "engine".
 */
import { readdirSync } from 'node:fs';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';

const dir = import.meta.dirname;
const filter = process.argv[2];
const files = readdirSync(dir)
  .filter((f) => f.endsWith('.bench.ts') && (!filter || f.includes(filter)))
  .sort();
for (const f of files) {
  process.stdout.write(`\n=== ${f} (${new Date().toISOString()}, node ${process.version})\n`);
  const mod = (await import(pathToFileURL(join(dir, f)).href)) as { run?: () => Promise<void> };
  if (typeof mod.run !== 'function') throw new Error(`${f} does not export run()`);
  await mod.run();
}
