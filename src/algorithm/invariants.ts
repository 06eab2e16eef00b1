// The checks every method makes at its edges: configuration when a state is built, the budget
// and the down fields when a client works, the uploads before the server state changes. The
// hot loops after these checks trust their arguments.

import { allFinite } from '../vec/kernels.js';
import type { Objective } from '../problem/objective.js';
import type { Budget, MethodConfig, Upload } from './method.js';
import type { Fields } from '../vec/fields.js';
import { MethodError } from './method-error.js';

/** The most local steps one client may take in one exchange; the timing layer caps lower. */
export const LOCAL_STEPS_MAX = 1_000_000;

function isPositiveFinite(value: number): boolean {
  return Number.isFinite(value) && value > 0;
}

/** Dimension and configuration shared by every method's initServer and initClient. */
export function assertConfig(dim: number, cfg: MethodConfig): void {
  if (!Number.isInteger(dim) || dim < 1) {
    throw new MethodError('E_METHOD_CONFIG', `dimension must be a positive integer, got ${dim}`);
  }
  if (!Number.isInteger(cfg.clientCount) || cfg.clientCount < 1) {
    throw new MethodError(
      'E_METHOD_CONFIG',
      `clientCount must be a positive integer, got ${cfg.clientCount}`,
    );
  }
  if (!isPositiveFinite(cfg.stepSize)) {
    throw new MethodError(
      'E_METHOD_CONFIG',
      `stepSize must be positive and finite, got ${cfg.stepSize}`,
    );
  }
  if (!isPositiveFinite(cfg.serverStepSize)) {
    throw new MethodError(
      'E_METHOD_CONFIG',
      `serverStepSize must be positive and finite, got ${cfg.serverStepSize}`,
    );
  }
  if (!Number.isFinite(cfg.proxCoefficient) || cfg.proxCoefficient < 0) {
    throw new MethodError(
      'E_METHOD_CONFIG',
      `proxCoefficient must be finite and >= 0, got ${cfg.proxCoefficient}`,
    );
  }
  if (!Number.isFinite(cfg.proxTolerance) || cfg.proxTolerance < 0) {
    throw new MethodError(
      'E_METHOD_CONFIG',
      `proxTolerance must be finite and >= 0, got ${cfg.proxTolerance}`,
    );
  }
}

export function assertClientId(clientId: number, cfg: MethodConfig): void {
  if (!Number.isInteger(clientId) || clientId < 0 || clientId >= cfg.clientCount) {
    throw new MethodError(
      'E_METHOD_CONFIG',
      `client id must be an integer in [0, ${cfg.clientCount}), got ${clientId}`,
    );
  }
}

/** A copy of the initial model, after checking its length and values. */
export function copyInitialModel(initialModel: Float64Array, dim: number): Float64Array {
  if (initialModel.length !== dim) {
    throw new MethodError(
      'E_METHOD_DIMENSION',
      `initial model has length ${initialModel.length}, expected ${dim}`,
    );
  }
  if (!allFinite(initialModel))
    throw new MethodError('E_METHOD_NOT_FINITE', 'initial model has a non-finite entry');
  return Float64Array.from(initialModel);
}

export function assertExchange(
  method: string,
  exchanges: readonly string[],
  exchange: string,
): void {
  if (!exchanges.includes(exchange)) {
    throw new MethodError(
      'E_METHOD_EXCHANGE',
      `${method} has no exchange "${exchange}" (it has ${exchanges.join(', ')})`,
    );
  }
}

export function assertObjectiveDimension(objective: Objective, dim: number): void {
  if (objective.dim !== dim) {
    throw new MethodError(
      'E_METHOD_DIMENSION',
      `objective has dimension ${objective.dim}, the client state ${dim}`,
    );
  }
}

export function assertBudget(budget: Budget): void {
  const steps = budget.localSteps;
  if (!Number.isInteger(steps) || steps < 1 || steps > LOCAL_STEPS_MAX) {
    throw new MethodError(
      'E_METHOD_BUDGET',
      `local steps must be an integer in [1, ${LOCAL_STEPS_MAX}], got ${steps}`,
    );
  }
  if (!isPositiveFinite(budget.stepSize)) {
    throw new MethodError(
      'E_METHOD_BUDGET',
      `step size must be positive and finite, got ${budget.stepSize}`,
    );
  }
}

/** The named vector of `fields`, checked for presence and length. */
export function requireField(fields: Fields, name: string, dim: number): Float64Array {
  const v = Object.hasOwn(fields, name) ? fields[name] : undefined;
  if (v === undefined)
    throw new MethodError('E_METHOD_MISSING_FIELD', `field "${name}" is missing`);
  if (v.length !== dim) {
    throw new MethodError(
      'E_METHOD_DIMENSION',
      `field "${name}" has length ${v.length}, expected ${dim}`,
    );
  }
  return v;
}

/**
 * Uploads of one exchange, checked before any server state changes: client ids in range and
 * strictly increasing, weights positive, every named field present, of length dim and finite
 * (a non-finite upload means a client diverged; folding it in would poison the model).
 */
export function assertUploads(
  uploads: readonly Upload[],
  clientCount: number,
  dim: number,
  fieldNames: readonly string[],
): void {
  let previousId = -1;
  for (const upload of uploads) {
    const id = upload.clientId;
    if (!Number.isInteger(id) || id <= previousId || id >= clientCount) {
      throw new MethodError(
        'E_METHOD_UPLOAD_ORDER',
        `upload client ids must increase strictly within [0, ${clientCount}); got ${id} after ${previousId}`,
      );
    }
    previousId = id;
    if (!isPositiveFinite(upload.weight)) {
      throw new MethodError(
        'E_METHOD_WEIGHT',
        `client ${id}: weight must be positive and finite, got ${upload.weight}`,
      );
    }
    for (const name of fieldNames) {
      const v = requireField(upload.fields, name, dim);
      if (!allFinite(v))
        throw new MethodError(
          'E_METHOD_NOT_FINITE',
          `client ${id}: field "${name}" has a non-finite entry`,
        );
    }
  }
}
