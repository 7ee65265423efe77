/** `npm run schema`: regenerate server/schema/mixture.schema.json from the zod schema. */
import { writeFileSync } from 'node:fs';
import { mixtureJsonSchema } from './json-schema.js';

const target = new URL('./mixture.schema.json', import.meta.url);
writeFileSync(target, JSON.stringify(mixtureJsonSchema(), null, 2) + '\n');
process.stdout.write(`wrote ${target.pathname}\n`);
