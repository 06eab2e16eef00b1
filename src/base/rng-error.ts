// A random-number request outside its domain (n < 1, shape <= 0, k > n, an all-zero state).

import { CodedError } from './coded-error.js';

export class RngError extends CodedError<'E_RNG_ARGUMENT'> {}
