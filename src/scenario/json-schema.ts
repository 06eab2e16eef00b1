// The JSON Schema that editors use to check scenario files, generated from the one zod schema.

import { z } from 'zod';
import { scenarioSchema } from './schema.js';

export function scenarioJsonSchema(): Record<string, unknown> {
  const schema = z.toJSONSchema(scenarioSchema, {
    io: 'input',
    target: 'draft-2020-12',
    unrepresentable: 'any',
  }) as Record<string, unknown>;
  return {
    ...schema,
    title: 'roundwire scenario',
  };
}
