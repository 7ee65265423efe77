/**
 * Versioned hazard sets of chemicals (migrations/0004_hazards.sql) and of species
 * (migrations/0005_species_hazards.sql). Versions are immutable (triggers refuse UPDATE and DELETE);
 * the highest is current; a write names the version it was based on (0 for the first) and is refused
 * with `StaleVersionError` (409) when another write came first.
 */
import { writeTransaction, type Db } from './db.js';
import { StaleVersionError } from './errors.js';

/** What a hazard set is about: a chemical (0004) or a species (0005). */
export type HazardKind = 'chemical' | 'species';

export interface StoredHazardSet<B = unknown> {
  /** the key of the chemical or species */
  id: string;
  kind: HazardKind;
  /** the same key, under the kind's name: `chemical` for a chemical's set (as before 0005), `species` for a species' */
  chemical?: string;
  species?: string;
  version: number;
  body: B;
  author: string;
  note: string | null;
  createdAt: string;
}

interface Raw {
  item_key: string;
  version: number;
  body: string;
  author: string;
  note: string | null;
  created_at: string;
}

const TABLES: Record<HazardKind, { table: string; key: string }> = {
  chemical: { table: 'hazard_sets', key: 'chemical_key' },
  species: { table: 'species_hazard_sets', key: 'species_key' },
};

/** The versions of one kind's hazard sets: current, history, write. */
function versions(db: Db, kind: HazardKind) {
  const { table, key } = TABLES[kind];
  const cols = `${key} AS item_key, version, body, author, note, created_at`;
  const st = {
    current: db.prepare(`SELECT ${cols} FROM ${table} WHERE ${key} = ? ORDER BY version DESC LIMIT 1`),
    history: db.prepare(`SELECT ${cols} FROM ${table} WHERE ${key} = ? ORDER BY version`),
    insert: db.prepare(`INSERT INTO ${table} (${key}, version, body, author, note, created_at) VALUES (?, ?, ?, ?, ?, ?)`),
  };
  const to = <B>(r: Raw): StoredHazardSet<B> => ({ id: r.item_key, kind, [kind]: r.item_key, version: r.version, body: JSON.parse(r.body) as B, author: r.author, note: r.note, createdAt: r.created_at });
  const api = {
    current<B>(id: string): StoredHazardSet<B> | null {
      const r = st.current.get(id) as Raw | undefined;
      return r ? to<B>(r) : null;
    },
    history<B>(id: string): StoredHazardSet<B>[] {
      return (st.history.all(id) as Raw[]).map((r) => to<B>(r));
    },
    /** Write a new version; `baseVersion` (0 for the first; null: no check, the seed) guards against lost updates. */
    write<B>(id: string, baseVersion: number | null, body: B, meta: { author?: string; note?: string | null } = {}): StoredHazardSet<B> {
      return writeTransaction(db, () => {
        const cur = api.current<B>(id);
        const curVersion = cur?.version ?? 0;
        if (baseVersion !== null && baseVersion !== curVersion) {
          throw new StaleVersionError(`the hazard data of ${kind} "${id}" are at version ${curVersion}, not ${baseVersion}; reload and send baseVersion ${curVersion}`, cur);
        }
        st.insert.run(id, curVersion + 1, JSON.stringify(body), meta.author ?? 'anonymous', meta.note ?? null, new Date().toISOString());
        return api.current<B>(id)!;
      });
    },
  };
  return api;
}
export type HazardVersions = ReturnType<typeof versions>;

/**
 * The hazard sets on the shelf. `current`, `history` and `write` at the top level are the chemicals'
 * (as before 0005); `species` holds the same three for species; `of(kind)` picks one.
 */
export function hazardsRepository(db: Db) {
  const chemical = versions(db, 'chemical');
  const species = versions(db, 'species');
  return {
    ...chemical,
    chemical,
    species,
    of(kind: HazardKind): HazardVersions {
      return kind === 'chemical' ? chemical : species;
    },
  };
}
export type HazardsRepository = ReturnType<typeof hazardsRepository>;
