// Double builds: generated C against the table's own double evaluators (see selftest-shared.ts).
import { checkAll } from './selftest-shared.js';

checkAll('double');
