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

/**
 * True when `error` says a value stopped being finite, whichever layer noticed it: every such
 * code is E_NOT_FINITE (the protocol's) or E_<LAYER>_NOT_FINITE (E_METHOD_NOT_FINITE,
 * E_COMPRESS_NOT_FINITE, ...). A diverging run is recognised by this, not by one layer's code.
 */
export function isNonFiniteError(error: unknown): boolean {
  const code =
    typeof error === 'object' && error !== null ? (error as { code?: unknown }).code : undefined;
  return typeof code === 'string' && /^E_([A-Z]+_)?NOT_FINITE$/.test(code);
}
