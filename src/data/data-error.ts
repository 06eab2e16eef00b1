// Errors raised by the data layer. The code is stable so that a caller (the scenario loader,
// the CLI, a test) can branch on it; fieldPath names the scenario field at fault when there is
// one (e.g. "data.samplesPerClient"), and the message names it too.

export type DataErrorCode =
  /** A data specification that cannot be honoured (list length, too few groups, ...). */
  | 'E_DATA_SPEC'
  /** A data set that cannot be loaded or does not have the expected shape. */
  | 'E_DATASET'
  /** A data file of the user's own that cannot be read or does not fit its scenario. */
  | 'E_DATA_FILE';

export class DataError extends Error {
  readonly code: DataErrorCode;
  readonly fieldPath: string | null;

  constructor(code: DataErrorCode, message: string, fieldPath: string | null = null) {
    super(message);
    this.name = 'DataError';
    this.code = code;
    this.fieldPath = fieldPath;
  }
}
