/** The JSON Schema (draft 2020-12) of the mixture file, generated from the zod schema. */
import { z } from 'zod';
import { mixtureSchema } from './mixture.js';

export function mixtureJsonSchema(): Record<string, unknown> {
  const schema = z.toJSONSchema(mixtureSchema, { io: 'input', unrepresentable: 'any' }) as Record<string, unknown>;
  return {
    ...schema,
    $id: 'https://brink.invalid/schema/mixture.schema.json',
    title: 'brink mixture file',
    description:
      'One sample: chemicals, species, chamber. Every physical value is an SI number, a string with a unit ("0.25 um^2/s", "50 mM", "1e-3 um^-3", "5 percent"), or { "value": …, "sd": … }.',
  };
}
