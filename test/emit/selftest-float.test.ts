// Float builds: generated C against the exact single-precision emulation and the certificate (see selftest-shared.ts).
import { checkAll } from './selftest-shared.js';

checkAll('float');
