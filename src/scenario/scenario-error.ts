// A scenario problem, named by the field's dotted path. The CLI maps it to exit code 2.

export type ScenarioErrorCode =
  | 'E_SCENARIO_SYNTAX'
  | 'E_SCENARIO_FIELD'
  | 'E_SCENARIO_TWEAK'
  | 'E_SCENARIO_FILE'
  /** the run the scenario describes would need more memory than RUN_MEMORY_MIB_MAX */
  | 'E_SCENARIO_MEMORY'
  /** the run could write more client records than CLIENT_RECORDS_MAX */
  | 'E_SCENARIO_RECORDS';

export class ScenarioError extends Error {
  readonly code: ScenarioErrorCode;
  /** dotted path of the offending field ('' for the whole file) */
  readonly fieldPath: string;
  /** what is wrong, without the field's path (the message is the path, then this) */
  readonly detail: string;

  constructor(code: ScenarioErrorCode, fieldPath: string, detail: string) {
    super(fieldPath ? `${fieldPath}: ${detail}` : detail);
    this.name = 'ScenarioError';
    this.code = code;
    this.fieldPath = fieldPath;
    this.detail = detail;
  }
}
