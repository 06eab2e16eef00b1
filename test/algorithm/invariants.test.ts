import { describe, expect, it } from 'vitest';
import {
  assertBudget,
  assertClientId,
  assertConfig,
  assertUploads,
  copyInitialModel,
  LOCAL_STEPS_MAX,
  requireField,
} from '../../src/algorithm/invariants.js';
import type { MethodConfig, Upload } from '../../src/algorithm/method.js';

const config: MethodConfig = {
  clientCount: 4,
  stepSize: 0.1,
  serverStepSize: 1,
  proxCoefficient: 0,
  proxTolerance: 0,
};

function upload(
  clientId: number,
  weight = 0.25,
  delta: Float64Array = new Float64Array(3),
): Upload {
  return { clientId, weight, localSteps: 1, stepSize: 0.1, fields: { delta } };
}

const code = (c: string) => expect.objectContaining({ code: c });

describe('method invariants', () => {
  it('check the configuration and the client id', () => {
    expect(() => assertConfig(3, config)).not.toThrow();
    expect(() => assertConfig(0, config)).toThrow(code('E_METHOD_CONFIG'));
    expect(() => assertConfig(3, { ...config, clientCount: 0 })).toThrow(code('E_METHOD_CONFIG'));
    expect(() => assertConfig(3, { ...config, stepSize: 0 })).toThrow(code('E_METHOD_CONFIG'));
    expect(() => assertConfig(3, { ...config, serverStepSize: Number.NaN })).toThrow(
      code('E_METHOD_CONFIG'),
    );
    expect(() => assertConfig(3, { ...config, proxCoefficient: -1 })).toThrow(
      code('E_METHOD_CONFIG'),
    );
    expect(() => assertConfig(3, { ...config, proxTolerance: Number.POSITIVE_INFINITY })).toThrow(
      code('E_METHOD_CONFIG'),
    );
    expect(() => assertClientId(3, config)).not.toThrow();
    expect(() => assertClientId(4, config)).toThrow(code('E_METHOD_CONFIG'));
  });

  it('copy the initial model only when it has the dimension and finite values', () => {
    const x0 = Float64Array.from([1, 2, 3]);
    const copy = copyInitialModel(x0, 3);
    expect(copy).not.toBe(x0);
    expect(Array.from(copy)).toEqual([1, 2, 3]);
    expect(() => copyInitialModel(x0, 4)).toThrow(code('E_METHOD_DIMENSION'));
    expect(() => copyInitialModel(Float64Array.from([1, Number.NaN, 3]), 3)).toThrow(
      code('E_METHOD_NOT_FINITE'),
    );
  });

  it('check the budget', () => {
    expect(() => assertBudget({ localSteps: 1, stepSize: 0.1, sampler: null })).not.toThrow();
    expect(() => assertBudget({ localSteps: 0, stepSize: 0.1, sampler: null })).toThrow(
      code('E_METHOD_BUDGET'),
    );
    expect(() => assertBudget({ localSteps: 1.5, stepSize: 0.1, sampler: null })).toThrow(
      code('E_METHOD_BUDGET'),
    );
    expect(() =>
      assertBudget({ localSteps: LOCAL_STEPS_MAX + 1, stepSize: 0.1, sampler: null }),
    ).toThrow(code('E_METHOD_BUDGET'));
    expect(() => assertBudget({ localSteps: 1, stepSize: -0.1, sampler: null })).toThrow(
      code('E_METHOD_BUDGET'),
    );
  });

  it('find a field of the right length or say why not', () => {
    const v = new Float64Array(3);
    expect(requireField({ model: v }, 'model', 3)).toBe(v);
    expect(() => requireField({}, 'model', 3)).toThrow(code('E_METHOD_MISSING_FIELD'));
    expect(() => requireField({ model: v }, 'model', 4)).toThrow(code('E_METHOD_DIMENSION'));
  });

  it('check uploads: ids strictly increasing within range, positive weights, finite fields', () => {
    expect(() => assertUploads([upload(0), upload(2)], 4, 3, ['delta'])).not.toThrow();
    expect(() => assertUploads([upload(2), upload(0)], 4, 3, ['delta'])).toThrow(
      code('E_METHOD_UPLOAD_ORDER'),
    );
    expect(() => assertUploads([upload(1), upload(1)], 4, 3, ['delta'])).toThrow(
      code('E_METHOD_UPLOAD_ORDER'),
    );
    expect(() => assertUploads([upload(4)], 4, 3, ['delta'])).toThrow(
      code('E_METHOD_UPLOAD_ORDER'),
    );
    expect(() => assertUploads([upload(0, 0)], 4, 3, ['delta'])).toThrow(code('E_METHOD_WEIGHT'));
    expect(() => assertUploads([upload(0)], 4, 3, ['delta', 'controlDelta'])).toThrow(
      code('E_METHOD_MISSING_FIELD'),
    );
    expect(() => assertUploads([upload(0, 0.25, new Float64Array(2))], 4, 3, ['delta'])).toThrow(
      code('E_METHOD_DIMENSION'),
    );
    const infinite = Float64Array.from([0, Number.POSITIVE_INFINITY, 0]);
    expect(() => assertUploads([upload(0, 0.25, infinite)], 4, 3, ['delta'])).toThrow(
      code('E_METHOD_NOT_FINITE'),
    );
  });
});
