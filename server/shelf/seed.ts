/** The demo shelf (seeds/demo-shelf.json, invented): loaded into a new database once. */
import { readFileSync } from 'node:fs';
import { writeTransaction, type Db } from '../store/db.js';
import { shelfRepository } from '../store/shelf.js';
import { shelfService } from './service.js';
import { hazardsRepository } from '../store/hazards.js';
import { hazardSetSchema, speciesHazardSetSchema } from '../protocol/hazards.js';
import { packagePath } from '../version.js';

export const DEMO_SHELF = packagePath('seeds', 'demo-shelf.json');
export const DEMO_HAZARDS = packagePath('seeds', 'demo-hazards.json');
/** Hazard data of the demo shelf's enzymes, by form (invented lab; classifications from memory, marked so in their source). */
export const DEMO_SPECIES_HAZARDS = packagePath('seeds', 'demo-species-hazards.json');
const MARK = 'demo_shelf_seeded_at';

/** Import the demo shelf (all or nothing) and record that it was done. */
export function seedDemoShelf(db: Db) {
  const doc = JSON.parse(readFileSync(DEMO_SHELF, 'utf8')) as unknown;
  const summary = shelfService(shelfRepository(db)).importShelf(doc, { author: 'demo seed', note: 'demo shelf (invented data)' });
  const repo = hazardsRepository(db);
  const seedHazards = (file: string, versions: typeof repo.chemical, schema: typeof hazardSetSchema | typeof speciesHazardSetSchema) => {
    const hazards = JSON.parse(readFileSync(file, 'utf8')) as Record<string, unknown>;
    for (const [key, body] of Object.entries(hazards)) {
      const parsed = schema.parse(body);
      const cur = versions.current(key);
      if (!cur || JSON.stringify(cur.body) !== JSON.stringify(parsed)) versions.write(key, null, parsed, { author: 'demo seed', note: 'demo hazard data: verify against the supplier safety data sheet' });
    }
  };
  seedHazards(DEMO_HAZARDS, repo.chemical, hazardSetSchema);
  seedHazards(DEMO_SPECIES_HAZARDS, repo.species, speciesHazardSetSchema);
  writeTransaction(db, () => db.prepare('INSERT INTO app_meta (key, value) VALUES (?, ?) ON CONFLICT (key) DO UPDATE SET value = excluded.value').run(MARK, new Date().toISOString()));
  return summary;
}

/** Seed on the first run only: never again once done, even if the shelf is later emptied of active items. */
export function ensureDemoShelf(db: Db): boolean {
  // one write transaction: two processes starting on one new file seed it once
  return writeTransaction(db, () => {
    const done = db.prepare('SELECT value FROM app_meta WHERE key = ?').get(MARK);
    if (done) return false;
    const repo = shelfRepository(db);
    if (repo.count('species') + repo.count('chemical') > 0) return false;
    seedDemoShelf(db);
    return true;
  });
}
