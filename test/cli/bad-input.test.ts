import { spawn } from 'node:child_process';
import { chmodSync, copyFileSync, existsSync, mkdirSync, mkdtempSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { badCases, baseProblem } from '../problem/bad-cases.js';
import { motorEmptyProblem, motorProblem } from './scenarios.js';
import { runCli } from '../helpers/cli.js';

// Runs the built CLI: `npx tsc -p tsconfig.json` (or `npm test`, which builds first) must have run.
const root = join(import.meta.dirname, '..', '..');
const cli = join(root, 'dist', 'src', 'cli', 'main.js');
const dir = mkdtempSync(join(tmpdir(), 'tessera-cli-bad-'));

interface Run {
  status: number | null;
  stderr: string;
}

function solve(problem: string, out: string): Promise<Run> {
  return new Promise((resolve) => {
    const child = spawn(process.execPath, [cli, 'solve', problem, '-o', out], { stdio: ['ignore', 'ignore', 'pipe'] });
    let stderr = '';
    child.stderr.setEncoding('utf8').on('data', (d: string) => (stderr += d));
    child.on('close', (status) => resolve({ status, stderr }));
  });
}

// The CLI runs are independent processes: start them all up front, a few at a time, and let each case assert its own.
const paths = badCases.map((c, i) => ({ file: join(dir, `case${i}${c.ext}`), out: join(dir, `case${i}.table.json`) }));
const runs: Run[] = [];

beforeAll(async () => {
  if (!existsSync(cli)) throw new Error(`${cli} is missing: run \`npx tsc -p tsconfig.json\` first`);
  badCases.forEach((c, i) => writeFileSync(paths[i].file, c.text));
  let next = 0;
  const worker = async () => {
    while (next < badCases.length) {
      const i = next++;
      runs[i] = await solve(paths[i].file, paths[i].out);
    }
  };
  await Promise.all([worker(), worker()]);
}, 600000);
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('tessera solve on bad problem files', () => {
  it('control: the valid base problem produces a table file', async () => {
    const file = join(dir, 'base.json');
    const out = join(dir, 'base.table.json');
    writeFileSync(file, JSON.stringify(baseProblem()));
    const r = await solve(file, out);
    expect(r.stderr).toBe('');
    expect(r.status).toBe(0);
    expect(existsSync(out)).toBe(true);
  });

  badCases.forEach((c, i) => {
    it(`exit 2, one line on stderr, no output file: ${c.title}`, () => {
      const { file, out } = paths[i];
      const r = runs[i];
      expect(r.status).toBe(2);
      const lines = r.stderr.split('\n').filter((l) => l.length > 0);
      expect(lines.length).toBe(1);
      const prefix = `tessera: ${file}: ${c.key}: `;
      expect(lines[0].startsWith(prefix), lines[0]).toBe(true);
      expect(lines[0].slice(prefix.length)).toMatch(c.reason);
      expect(existsSync(out)).toBe(false);
    });
  });
});

// ---------------------------------------------------------------------------------------------
// The catalogue of every other path a user can take to an error or a warning: the exact stderr
// and the exit code (0 ok, 1 the check found a problem, 2 usage/input error, 3 internal error,
// 130 interrupted; README "Exit codes" and `tessera --help`). The texts of commander's parser
// errors are commander's own, prefixed and put on one line.
// ---------------------------------------------------------------------------------------------

interface CliCase {
  title: string;
  args: string[];
  code: number;
  /** exact stderr (every line, each ending with \n), or a pattern */
  stderr: string | RegExp;
  stdout?: RegExp;
  /** paths that must not exist afterwards */
  absent?: string[];
  /** run as user nobody (65534): a root process may write anywhere */
  nobody?: boolean;
}

const cdir = mkdtempSync(join(tmpdir(), 'tessera-cli-catalogue-'));
chmodSync(cdir, 0o755); // readable by the `nobody` runs
const P = join(cdir, 'motor.json');
const T = join(cdir, 'motor.table.json');
const TL = join(cdir, 'motor.lean.json');
const EMPTY = join(cdir, 'empty.json');
const RO = join(cdir, 'read-only-dir');
const AFILE = join(cdir, 'a-file.txt');
const pts = (name: string, text: string) => {
  const f = join(cdir, name);
  writeFileSync(f, text);
  return f;
};
const PTS_UNKNOWN = pts('unknown.csv', 'omega,curent\n0.1,0.2\n');
const PTS_TWICE = pts('twice.csv', 'omega,omega\n0.1,0.2\n');
const PTS_MISSING = pts('missing.csv', 'current\n0.1\n');
const NOT_INDEX = pts('not.index', 'omega,current\n0.1,0.2\n');
// a directory named like an index file
const RO_INDEX = join(cdir, 'dir.index');
// a table beside a <table>.index that is not an index file (copied from T in beforeAll)
const NOT_INDEX_TABLE = join(cdir, 'motor-copy.table.json');
const INIT_OUT = pts('init-outside.csv', '0.5,0.1\n5,0.1\n');
const PART1 = join(cdir, 'motor.part-1-of-2.json');
const CP_OTHER = pts('other.checkpoint.json', JSON.stringify({ format: 'tessera-checkpoint', version: 1, problemHash: 'sha256:00', part: null, state: { regions: [], boxes: [], done: [] } }));

const runAs = (args: string[], nobody = false) => runCli(args, { cwd: cdir, uid: nobody ? 65534 : undefined, killAfter: 60000 });

const usage = (m: string) => `tessera: (command line): ${m}\n`;
const cliCases: CliCase[] = [
  // exit code 2 for every parser error (commander), never 1
  { title: 'unknown option', args: ['solve', P, '--bogus'], code: 2, stderr: usage("unknown option '--bogus'") },
  { title: 'misspelt option, with a suggestion', args: ['map', T, '--colr', 'law', '-o', 'm.svg'], code: 2, stderr: usage("unknown option '--colr' (Did you mean --color?)") },
  { title: 'unknown command', args: ['slove', P], code: 2, stderr: usage("unknown command 'slove' (Did you mean solve?)") },
  { title: 'missing required -o', args: ['map', T], code: 2, stderr: usage("required option '-o, --output <svg>' not specified") },
  { title: 'missing argument', args: ['evaluate'], code: 2, stderr: usage("missing required argument 'table'") },
  { title: 'too many arguments', args: ['solve', P, 'extra.json'], code: 2, stderr: usage("too many arguments for 'solve'. Expected 1 argument but got 2.") },
  { title: 'no command at all: the help, as a usage error', args: [], code: 2, stderr: /^Usage: tessera \[options\] \[command\][\s\S]*Exit codes:\n {2}0 {4}done/ },
  { title: 'bad option value', args: ['gaps', T, '--time-limit', '0'], code: 2, stderr: usage('--time-limit: expected a positive number, got "0"') },
  // evaluate: header matched by name (contract, `tessera evaluate`)
  { title: 'points header with an unknown name', args: ['evaluate', T, '--points', PTS_UNKNOWN], code: 2, stderr: `tessera: ${PTS_UNKNOWN}: line 1: unknown column "curent" in the header (θ is omega, current)\n` },
  { title: 'points header naming a column twice', args: ['evaluate', T, '--points', PTS_TWICE], code: 2, stderr: `tessera: ${PTS_TWICE}: line 1: column "omega" named twice in the header (columns 1 and 2)\n` },
  { title: 'points header missing a θ name', args: ['evaluate', T, '--points', PTS_MISSING], code: 2, stderr: `tessera: ${PTS_MISSING}: line 1: header lacks "omega" (θ is omega, current)\n` },
  // output paths, checked before any computation
  { title: 'solve -o under /proc', args: ['solve', P, '-o', '/proc/cdir/t.json'], code: 2, stderr: 'tessera: /proc/cdir/t.json: -o: /proc is a kernel pseudo file system, not a place for output files; give a path on a disk\n' },
  { title: 'emit -o /proc/cdir ends (it used to hang at 100 % CPU)', args: ['emit', T, '-o', '/proc/cdir'], code: 2, stderr: 'tessera: /proc/cdir: -o: /proc is a kernel pseudo file system, not a place for output files; give a path on a disk\n' },
  { title: 'emit -o /sys/cdir (it used to be an internal error, EPERM, exit 3)', args: ['emit', T, '-o', '/sys/cdir'], code: 2, stderr: 'tessera: /sys/cdir: -o: /sys is a kernel pseudo file system, not a place for output files; give a path on a disk\n' },
  { title: 'a parent of the output is a file', args: ['solve', P, '-o', join(AFILE, 't.json')], code: 2, stderr: `tessera: ${join(AFILE, 't.json')}: -o: ${AFILE} is not a directory\n` },
  { title: 'emit -o names a file', args: ['emit', T, '-o', AFILE], code: 2, stderr: `tessera: ${AFILE}: -o: exists and is not a directory\n` },
  { title: 'solve -o into a directory without write permission', args: ['solve', P, '-o', join(RO, 't.json')], code: 2, nobody: true, stderr: `tessera: ${join(RO, 't.json')}: -o: no permission to write in ${RO}\n`, absent: [join(RO, 't.json')] },
  { title: 'emit -o below a directory without write permission', args: ['emit', T, '-o', join(RO, 'c')], code: 2, nobody: true, stderr: `tessera: ${join(RO, 'c')}: -o: no permission to write in ${RO}\n`, absent: [join(RO, 'c')] },
  { title: 'map -o into a directory without write permission', args: ['map', T, '-o', join(RO, 'm.svg')], code: 2, nobody: true, stderr: `tessera: ${join(RO, 'm.svg')}: -o: no permission to write in ${RO}\n` },
  { title: 'view -o into a directory without write permission', args: ['view', T, '-o', join(RO, 'v.html')], code: 2, nobody: true, stderr: `tessera: ${join(RO, 'v.html')}: -o: no permission to write in ${RO}\n` },
  { title: 'map -o with a .png name (SVG is written)', args: ['map', T, '-o', 'm.png'], code: 2, stderr: 'tessera: m.png: -o: this writes an SVG map; give a file name ending in .svg (not .png)\n', absent: [join(cdir, 'm.png')] },
  { title: 'view -o with a .svg name', args: ['view', T, '-o', 'v.svg'], code: 2, stderr: 'tessera: v.svg: -o: this writes an HTML page; give a file name ending in .html or .htm (not .svg)\n' },
  { title: 'solve -o without .json', args: ['solve', P, '-o', 'table.txt'], code: 2, stderr: 'tessera: table.txt: -o: this writes a JSON table; give a file name ending in .json (not .txt)\n' },
  { title: 'emit --report without .json', args: ['emit', T, '-o', 'c-out', '--report', 'r.txt'], code: 2, stderr: 'tessera: r.txt: --report: this writes a JSON report; give a file name ending in .json (not .txt)\n', absent: [join(cdir, 'c-out')] },
  { title: 'simulate --csv with another extension', args: ['simulate', T, '--x0', '0.5,0', '--csv', 'run.txt'], code: 2, stderr: 'tessera: run.txt: --csv: this writes CSV; give a file name ending in .csv (not .txt)\n' },
  { title: 'audit --search a structure the fixed-point build cannot print', args: ['audit', T, '-o', 'a.html', '--precision', 'q15', '--search', 'capped'], code: 2, stderr: usage('--search: the q15 build prints tree or sequential search, not capped'), absent: [join(cdir, 'a.html')] },
  { title: 'audit -o with a .pdf name', args: ['audit', T, '-o', 'report.pdf'], code: 2, stderr: 'tessera: report.pdf: -o: this writes an HTML report; give a file name ending in .html or .htm (not .pdf)\n' },
  { title: 'emit --clamp with a fixed-point build', args: ['emit', T, '-o', 'c-q15', '--precision', 'q15', '--clamp'], code: 2, stderr: usage('--clamp: applies to the float and double builds, not to q15'), absent: [join(cdir, 'c-q15')] },
  { title: 'a missing output directory is created, and said so', args: ['map', T, '-o', 'new/dir/m.svg'], code: 0, stderr: '', stdout: /^tessera: note: created the directory new\/dir\n[\s\S]*written new\/dir\/m\.svg/ },
  // threads, parts, join and checkpoints
  { title: 'solve --threads 0', args: ['solve', P, '--threads', '0'], code: 2, stderr: usage('--threads: expected a positive integer, got "0"') },
  { title: 'evaluate --index with another extension', args: ['evaluate', T, '--at', '0,0', '--index', 'motor.json'], code: 2, stderr: `tessera: motor.json: --index: this keeps a tessera-index file; give a file name ending in .index\n` },
  { title: 'evaluate --index naming a file that is not an index (never overwritten)', args: ['evaluate', T, '--at', '0,0', '--index', NOT_INDEX], code: 2, stderr: `tessera: ${NOT_INDEX}: --index: not a tessera-index file (does not start with "tessera-index 1"); name a new file or an index file written by tessera evaluate\n` },
  { title: 'evaluate --index in a directory that is a file', args: ['evaluate', T, '--at', '0,0', '--index', join(AFILE, 'x.index')], code: 2, stderr: `tessera: ${join(AFILE, 'x.index')}: --index: ${AFILE} is not a directory\n` },
  // solve/join --index: the index path checked before any work, no table or index written
  { title: 'solve --index with another extension', args: ['solve', P, '-o', 'si.table.json', '--index', 'motor.json'], code: 2, stderr: `tessera: motor.json: --index: this keeps a tessera-index file; give a file name ending in .index\n`, absent: [join(cdir, 'si.table.json')] },
  { title: 'solve --index naming a file that is not an index (never overwritten)', args: ['solve', P, '-o', 'sn.table.json', '--index', NOT_INDEX], code: 2, stderr: `tessera: ${NOT_INDEX}: --index: not a tessera-index file (does not start with "tessera-index 1"); name a new file or an index file written by tessera\n`, absent: [join(cdir, 'sn.table.json')] },
  { title: 'solve --index in a directory that is a file', args: ['solve', P, '-o', 'sd.table.json', '--index', join(AFILE, 'x.index')], code: 2, stderr: `tessera: ${join(AFILE, 'x.index')}: --index: ${AFILE} is not a directory\n`, absent: [join(cdir, 'sd.table.json')] },
  { title: 'solve --index naming a directory', args: ['solve', P, '-o', 'sr.table.json', '--index', RO_INDEX], code: 2, stderr: `tessera: ${RO_INDEX}: --index: is a directory; give a file name to write\n`, absent: [join(cdir, 'sr.table.json')] },
  { title: 'solve --index with --part (a part file has no index)', args: ['solve', P, '--part', '2/2', '-o', 'motor.part-2-of-2.json', '--index'], code: 2, stderr: usage('--index: a part file has no index; give --index to `tessera join` when joining the parts'), absent: [join(cdir, 'motor.part-2-of-2.json'), join(cdir, 'motor.part-2-of-2.json.index')] },
  { title: 'join --index with another extension', args: ['join', PART1, PART1, '-o', 'ji.table.json', '--index', 'ji.json'], code: 2, stderr: `tessera: ji.json: --index: this keeps a tessera-index file; give a file name ending in .index\n`, absent: [join(cdir, 'ji.table.json')] },
  { title: 'evaluate --index alone next to a table whose <table>.index is not an index file', args: ['evaluate', NOT_INDEX_TABLE, '--at', '0,0', '--index'], code: 2, stderr: `tessera: ${NOT_INDEX_TABLE}.index: --index: not a tessera-index file (does not start with "tessera-index 1"); name a new file or an index file written by tessera evaluate\n` },
  { title: 'evaluate --threads 0', args: ['evaluate', T, '--at', '0,0', '--threads', '0'], code: 2, stderr: usage('--threads: expected a positive integer, got "0"') },
  { title: 'solve --part outside 1..k', args: ['solve', P, '--part', '3/2'], code: 2, stderr: usage('--part: expected i/k with 1 ≤ i ≤ k (the i-th of k sub-boxes), got "3/2"') },
  { title: 'solve --resume from a checkpoint of another problem', args: ['solve', P, '--resume', CP_OTHER, '-o', 'r.table.json'], code: 2, stderr: `tessera: ${CP_OTHER}: problemHash: the checkpoint belongs to another problem than ${P}\n`, absent: [join(cdir, 'r.table.json')] },
  { title: 'solve --checkpoint without .json', args: ['solve', P, '--checkpoint', 'cp.txt'], code: 2, stderr: 'tessera: cp.txt: --checkpoint: this writes a JSON checkpoint; give a file name ending in .json (not .txt)\n' },
  { title: 'join with a part missing', args: ['join', PART1, '-o', 'j.table.json'], code: 2, stderr: usage('PART: part 2 of 2 missing'), absent: [join(cdir, 'j.table.json')] },
  { title: 'join with a part given twice', args: ['join', PART1, PART1, '-o', 'j.table.json'], code: 2, stderr: `tessera: ${PART1}: part: part 1 of 2 is given twice (also ${PART1})\n` },
  { title: 'join of a table, not a part file', args: ['join', T, '-o', 'j.table.json'], code: 2, stderr: `tessera: ${T}: format: expected "tessera-part" (a part file written by \`tessera solve --part\`), got "tessera-table"\n` },
  { title: 'join without -o of files not named NAME.part-i-of-k.json', args: ['join', T], code: 2, stderr: usage(`-o: give the table file to write (${T} is not named NAME.part-i-of-k.json)`) },
  // problem with no feasible θ
  { title: 'empty feasible set: the conflicting limits named', args: ['solve', EMPTY, '-o', 'e.table.json'], code: 2, stderr: `tessera: ${EMPTY}: constraints: the feasible set is empty: no θ in the parameter box admits inputs that meet the limits; these limits conflict within the box: volt >= -1 at k = 0 and omega <= 1 at k = 1\n`, absent: [join(cdir, 'e.table.json')] },
  // vocabulary
  { title: 'gaps: two different problem files', args: ['gaps', T, P, '--problem', EMPTY], code: 2, stderr: usage(`--problem: two different problem files given ("${P}" as an argument and "${EMPTY}")`) },
  { title: '--colour with an unknown scheme', args: ['map', T, '--colour', 'purple', '-o', 'c.svg'], code: 2, stderr: usage('--colour: expected law, active or region, got "purple"') },
  { title: '--colour and --color that disagree', args: ['map', T, '--colour', 'active', '--color', 'region', '-o', 'c.svg'], code: 2, stderr: usage('--colour: given together with --color and different ("active" vs "region")') },
  { title: '--heat overrides --color: a warning', args: ['map', T, '--heat', 'volt', '--color', 'active', '-o', 'h.svg', '-q'], code: 0, stderr: 'tessera: warning: --heat volt fills the regions, so --color active is not drawn\n' },
  { title: 'map --window reversed', args: ['map', T, '--window', '1:0,-1:1', '-o', 'w.svg'], code: 2, stderr: usage('--window: omega: 1:0 is empty (the first value must be below the second)') },
  { title: 'map --window outside the box', args: ['map', T, '--window', '-1:1,-2:1', '-o', 'w.svg'], code: 2, stderr: usage('--window: current: -2:1 leaves the parameter box [-1, 1]') },
  { title: 'map --window malformed', args: ['map', T, '--window', '0-1,0-1', '-o', 'w.svg'], code: 2, stderr: usage('--window: expected x0:x1,y0:y1, got "0-1,0-1"') },
  { title: 'trajectory start outside the box: a warning', args: ['map', T, '--trajectories', INIT_OUT, '-o', 't.svg', '-q'], code: 0, stderr: `tessera: warning: ${INIT_OUT}: initial state 2 lies outside the parameter box (omega = 5 not in [-3, 3]): its start is drawn off the map\n` },
  // lean tables keep no value function
  { title: 'map --heat cost on a lean table', args: ['map', TL, '--heat', 'cost', '-o', 'lean-cost.svg'], code: 2, stderr: `tessera: ${TL}: lean: a lean table keeps no value function J*(θ); draw the cost heat map from a table solved without --lean\n`, absent: [join(cdir, 'lean-cost.svg')] },
  // exit code 1: the check found a problem
  { title: 'emit --certify NOT SAFE exits 1', args: ['emit', T, '-o', 'c-unsafe', '--certify', '--tolerance', '1e-300', '--samples', '200'], code: 1, stderr: '', stdout: /^tessera: note: created the directory c-unsafe\n[\s\S]*NOT SAFE at tolerance 1\.00e-300/ },
  { title: 'emit --certify of the double build', args: ['emit', T, '-o', 'c-double', '--precision', 'double', '--certify', '--samples', '200', '-q'], code: 0, stderr: '' },
];

const cliRuns: { status: number | null; stdout: string; stderr: string }[] = [];
beforeAll(async () => {
  if (!existsSync(cli)) throw new Error(`${cli} is missing: run \`npx tsc -p tsconfig.json\` first`);
  writeFileSync(P, JSON.stringify(motorProblem()));
  writeFileSync(EMPTY, JSON.stringify(motorEmptyProblem()));
  writeFileSync(AFILE, 'not a directory\n');
  mkdirSync(RO);
  chmodSync(RO, 0o555);
  const made = await runAs(['solve', P, '-o', T, '-q']);
  if (made.status !== 0) throw new Error(`could not solve the catalogue's table: ${made.stderr}`);
  const part = await runAs(['solve', P, '--part', '1/2', '-o', PART1, '-q']);
  if (part.status !== 0) throw new Error(`could not solve the catalogue's part file: ${part.stderr}`);
  mkdirSync(RO_INDEX);
  copyFileSync(T, NOT_INDEX_TABLE);
  writeFileSync(`${NOT_INDEX_TABLE}.index`, 'omega,current\n0.1,0.2\n');
  const lean = await runAs(['solve', P, '--lean', '-o', TL, '-q']);
  if (lean.status !== 0) throw new Error(`could not solve the catalogue's lean table: ${lean.stderr}`);
  let next = 0;
  const worker = async () => {
    while (next < cliCases.length) {
      const i = next++;
      cliRuns[i] = await runAs(cliCases[i].args, cliCases[i].nobody);
    }
  };
  await Promise.all([worker(), worker(), worker()]);
}, 240000);
afterAll(() => rmSync(cdir, { recursive: true, force: true }));

describe('tessera CLI: usage errors, output paths and warnings (exact message and exit code)', () => {
  cliCases.forEach((c, i) => {
    it(`${c.title}: exit ${c.code}`, () => {
      const r = cliRuns[i];
      if (typeof c.stderr === 'string') expect(r.stderr).toBe(c.stderr);
      else expect(r.stderr).toMatch(c.stderr);
      expect(r.status).toBe(c.code);
      if (c.stdout) expect(r.stdout).toMatch(c.stdout);
      for (const a of c.absent ?? []) expect(existsSync(a), a).toBe(false);
      // no temp file is ever left behind
      expect(readdirSync(cdir).filter((f) => f.endsWith('.tmp') || f.startsWith('.tessera-probe'))).toEqual([]);
    });
  });
});
