// The plan a worker receives in its welcome: the resolved scenario, the method's numbers and the
// model's dimension. One schema is its one definition; the worker parses it once, on arrival,
// and uses the typed result everywhere after.

import { z } from 'zod';
import type { MethodConfig } from '../algorithm/method.js';
import { scenarioSchema } from '../scenario/schema.js';

const methodConfigSchema = z.strictObject({
  clientCount: z.number().int().positive(),
  stepSize: z.number().positive(),
  serverStepSize: z.number().positive(),
  proxCoefficient: z.number().nonnegative(),
  proxTolerance: z.number().nonnegative(),
}) satisfies z.ZodType<MethodConfig>;

export const wirePlanSchema = z.strictObject({
  scenario: scenarioSchema,
  methodConfig: methodConfigSchema,
  dim: z.number().int().positive().max(Number.MAX_SAFE_INTEGER),
});

/** What a worker needs to host clients: JSON-able, sent in the welcome message. */
export type WirePlan = z.output<typeof wirePlanSchema>;
