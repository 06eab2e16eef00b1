// Errors of the timing models. Each carries a stable code so that scenario validation and the
// runtimes can branch on the cause, and the field path the user has to fix where there is one.

export type TimingErrorCode =
  /** method.localSteps is a list whose length is not the client count */
  | 'E_TIMING_LOCAL_STEPS_LENGTH'
  /** a timing.links quantity is a list whose length is not the client count */
  | 'E_TIMING_LINKS_LENGTH'
  /** a link draw overflowed or underflowed (a lognormal sigma far too large) */
  | 'E_TIMING_LINK_NOT_FINITE'
  /** a slowdown draw overflowed (a pareto shape far below 1) */
  | 'E_TIMING_SLOWDOWN_NOT_FINITE'
  /** fastest-k asks for more updates than the round has participants */
  | 'E_TIMING_POLICY_K'
  /** a count, time, size or index outside its domain (a caller's bug, not a scenario's) */
  | 'E_TIMING_ARGUMENT';

export class TimingError extends Error {
  readonly code: TimingErrorCode;
  /** the scenario field to fix, e.g. `method.localSteps`; null for internal misuse */
  readonly fieldPath: string | null;

  constructor(code: TimingErrorCode, message: string, fieldPath: string | null = null) {
    super(message);
    this.name = 'TimingError';
    this.code = code;
    this.fieldPath = fieldPath;
  }
}

/** Throws E_TIMING_ARGUMENT unless `value` is an integer in [min, max]. */
export function assertIntegerInRange(name: string, value: number, min: number, max: number): void {
  if (!Number.isInteger(value) || value < min || value > max) {
    throw new TimingError(
      'E_TIMING_ARGUMENT',
      `${name} must be an integer in [${min}, ${max}], got ${value}`,
    );
  }
}

/** Throws E_TIMING_ARGUMENT unless `value` is finite and at least `min`. */
export function assertFiniteAtLeast(name: string, value: number, min: number): void {
  if (!Number.isFinite(value) || value < min) {
    throw new TimingError(
      'E_TIMING_ARGUMENT',
      `${name} must be finite and >= ${min}, got ${value}`,
    );
  }
}
