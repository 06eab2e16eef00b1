// A scenario problem, named by the field's dotted path. The CLI maps it to exit code 2.

export type ScenarioErrorCode = 'E_SCENARIO_SYNTAX' | 'E_SCENARIO_FIELD' | 'E_SCENARIO_OVERRIDE' | 'E_SCENARIO_FILE';

export class ScenarioError extends Error {
  readonly code: ScenarioErrorCode;
  /** dotted path of the offending field ('' for the whole file) */
  readonly fieldPath: string;

  constructor(code: ScenarioErrorCode, fieldPath: string, message: string) {
    super(fieldPath ? `${fieldPath}: ${message}` : message);
    this.name = 'ScenarioError';
    this.code = code;
    this.fieldPath = fieldPath;
  }
}
