/** The scenario format as JSON Schema, generated from the zod schema (never written by hand). */
import { z } from 'zod';
import { scenarioSchema } from './schema.ts';

export function scenarioJsonSchema(): Record<string, unknown> {
  return {
    ...z.toJSONSchema(scenarioSchema, { io: 'input', unrepresentable: 'any' }),
    title: 'Tidemark scenario',
  };
}
