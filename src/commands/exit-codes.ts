// Process exit codes, documented in every command's --help and in the README.

export const exitCodes = {
  ok: 0,
  /** the run failed: a runtime error, a lost coordinator, an uncertified optimum */
  failure: 1,
  /** bad input: a scenario file, a --tweak, a --ladder, any other command-line argument */
  badInput: 2,
  /** interrupted (SIGINT / Ctrl-C, SIGTERM) after a checkpoint; 128 + SIGINT's number, as shells do */
  interrupted: 130,
} as const;

/**
 * The one table from an error's code to the exit code: every code that means the input was bad
 * (a scenario, a tweak, a ladder, an argument, a key file, a results folder) exits 2. Any other
 * error is a failed run (1); an interrupted one exits 130 (RunInterrupted, not a code).
 */
export const BAD_INPUT_CODES: ReadonlySet<string> = new Set([
  // src/scenario
  'E_SCENARIO_SYNTAX',
  'E_SCENARIO_FIELD',
  'E_SCENARIO_TWEAK',
  'E_SCENARIO_FILE',
  'E_SCENARIO_MEMORY',
  'E_SCENARIO_RECORDS',
  // src/data
  'E_DATA_SPEC',
  'E_DATASET',
  'E_DATA_FILE',
  // src/timing
  'E_TIMING_ARGUMENT',
  'E_TIMING_LOCAL_STEPS_LENGTH',
  'E_TIMING_LINKS_LENGTH',
  'E_TIMING_LINK_NOT_FINITE',
  'E_TIMING_POLICY_K',
  'E_TIMING_SLOWDOWN_NOT_FINITE',
  // src/results
  'E_RESULTS_FOLDER',
  'E_CHECKPOINT_MISSING',
  'E_CHECKPOINT_DAMAGED',
  'E_CHECKPOINT_VERSION',
  'E_CHECKPOINT_PLAN',
  // src/report
  'E_COMPARE_VARIANTS',
  'E_COMPARE_REPEATS',
  'E_STATISTICS_ARGUMENT',
  'E_LADDER_FIELDS',
  'E_LADDER_RUNG',
  'E_LADDER_SYNTAX',
  'E_RESULTS_CONTENT',
  'E_RESULTS_FILE',
  // src/report, tuning
  'E_TUNE_OPTION',
  'E_TUNE_FIELD',
  // runtime
  'E_LISTEN_ADDRESS',
  // src/commands and src/cli.ts
  'E_KEY_FILE',
  'E_OPTION_VALUE',
  'E_USAGE',
]);

/** The exit code for an error a command did not handle itself. */
export function exitCodeOf(error: unknown): number {
  const code =
    typeof error === 'object' && error !== null ? (error as { code?: unknown }).code : undefined;
  return typeof code === 'string' && BAD_INPUT_CODES.has(code)
    ? exitCodes.badInput
    : exitCodes.failure;
}

export const exitCodesHelp = `
Exit codes:
  0    success: the results are written, whatever the run found (diverged included)
  1    the run failed (runtime error)
  2    bad input: scenario file, --tweak, --ladder or other argument, or a checkpoint
       resume cannot use
  130  interrupted (Ctrl-C, SIGTERM), with a checkpoint: roundwire resume <folder>`;
