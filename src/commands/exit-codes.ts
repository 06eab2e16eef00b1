// Process exit codes, documented in every command's --help and in the README.

export const exitCodes = {
  ok: 0,
  /** the run failed: a runtime error, a lost coordinator, an uncertified optimum */
  failure: 1,
  /** bad input: a scenario file, a --tweak, a --ladder, any other command-line argument */
  badInput: 2,
  /** interrupted (SIGINT / Ctrl-C); 128 + signal number, as shells do */
  interrupted: 130,
} as const;

export const exitCodesHelp = `
Exit codes:
  0    success
  1    the run failed (runtime error)
  2    bad input: scenario file, --tweak, --ladder or other argument
  130  interrupted (Ctrl-C)`;
