/** Exit codes of every command; README and `tessera --help` list the same table. */
export const EXIT = {
  /** done, nothing found */
  ok: 0,
  /** the check found a problem: holes (gaps), NOT SAFE (emit --certify), failed audit/simulate checks */
  found: 1,
  /** usage or input error: bad option, missing argument, unknown command, bad file, unusable output path */
  usage: 2,
  /** internal error (a bug: please report it with TESSERA_DEBUG=1) */
  internal: 3,
  /** interrupted (Ctrl-C / SIGINT) */
  interrupted: 130,
} as const;

export const EXIT_CODES_HELP = `Exit codes:
  0    done (no problem found)
  1    the check found a problem: holes (gaps), NOT SAFE (emit --certify), a failed
       audit check, a closed loop leaving the regions or breaking a limit (simulate)
  2    usage or input error: unknown option or command, missing argument, bad value,
       bad problem/table/points file, unusable output path, empty feasible set
  3    internal error (run with TESSERA_DEBUG=1 and report it)
  130  interrupted (Ctrl-C)`;
