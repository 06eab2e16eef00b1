// The code of the error an action throws, for tests that assert stable error codes.
import { CodedError } from '../../src/base/coded-error.js';

type CodedErrorClass = abstract new (...args: never[]) => CodedError<string>;

/**
 * The thrown error's code when it is an instance of `errorClass`; a description when something
 * else is thrown (so the assertion fails readably); 'no error' when nothing is thrown.
 */
export function codeOf(action: () => unknown, errorClass: CodedErrorClass): string {
  try {
    action();
  } catch (error) {
    return error instanceof errorClass ? error.code : `not a ${errorClass.name}: ${String(error)}`;
  }
  return 'no error';
}
