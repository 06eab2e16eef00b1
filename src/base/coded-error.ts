// The error every module throws: a stable code a caller or test can branch on, beside the
// message a person reads (the habit of the ws library's WS_ERR_* codes).

export class CodedError<Code extends string> extends Error {
  readonly code: Code;

  constructor(code: Code, message: string) {
    super(message);
    this.name = new.target.name;
    this.code = code;
  }
}

/** True when `error` carries `code` (any module's coded error, or a plain object with a code). */
export function hasErrorCode(error: unknown, code: string): boolean {
  return typeof error === 'object' && error !== null && (error as { code?: unknown }).code === code;
}
