// Every method by its scenario name: the one place the engine and the coordinator look a
// method up, so that both drive the very same object.

import { fedavg } from './fedavg.js';
import { fedlin } from './fedlin.js';
import { fednova } from './fednova.js';
import { fedprox } from './fedprox.js';
import { fedsplit } from './fedsplit.js';
import { gd } from './gd.js';
import { scaffold } from './scaffold.js';
import type { Method, MethodName } from './method.js';
import { MethodError } from './method-error.js';

const METHODS: Readonly<Record<MethodName, Method>> = {
  gd,
  fedavg,
  fedprox,
  fednova,
  scaffold,
  fedlin,
  fedsplit,
};

export function methodByName(name: MethodName): Method {
  if (!Object.hasOwn(METHODS, name))
    throw new MethodError('E_METHOD_UNKNOWN', `no method named "${String(name)}"`);
  return METHODS[name];
}
