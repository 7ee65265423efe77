/** Versioned hazard sets of chemicals (migrations/0004_hazards.sql). */
import type { Db } from './db.js';
import { StaleVersionError } from './errors.js';

export interface StoredHazardSet<B = unknown> {
  chemical: string;
  version: number;
  body: B;
  author: string;
  note: string | null;
  createdAt: string;
}

interface Raw {
  chemical_key: string;
  version: number;
  body: string;
  author: string;
  note: string | null;
  created_at: string;
}

export function hazardsRepository(db: Db) {
  const st = {
    current: db.prepare('SELECT * FROM hazard_sets WHERE chemical_key = ? ORDER BY version DESC LIMIT 1'),
    history: db.prepare('SELECT * FROM hazard_sets WHERE chemical_key = ? ORDER BY version'),
    insert: db.prepare('INSERT INTO hazard_sets (chemical_key, version, body, author, note, created_at) VALUES (?, ?, ?, ?, ?, ?)'),
  };
  const to = <B>(r: Raw): StoredHazardSet<B> => ({ chemical: r.chemical_key, version: r.version, body: JSON.parse(r.body) as B, author: r.author, note: r.note, createdAt: r.created_at });
  return {
    current<B>(key: string): StoredHazardSet<B> | null {
      const r = st.current.get(key) as Raw | undefined;
      return r ? to<B>(r) : null;
    },
    history<B>(key: string): StoredHazardSet<B>[] {
      return (st.history.all(key) as Raw[]).map((r) => to<B>(r));
    },
    /** Write a new version; `baseVersion` (0 for the first) guards against lost updates. */
    write<B>(key: string, baseVersion: number | null, body: B, meta: { author?: string; note?: string | null } = {}): StoredHazardSet<B> {
      return db.transaction(() => {
        const cur = this.current<B>(key);
        const curVersion = cur?.version ?? 0;
        if (baseVersion !== null && baseVersion !== curVersion) {
          throw new StaleVersionError(`the hazard data of "${key}" are at version ${curVersion}, not ${baseVersion}; reload and send baseVersion ${curVersion}`, cur);
        }
        st.insert.run(key, curVersion + 1, JSON.stringify(body), meta.author ?? 'anonymous', meta.note ?? null, new Date().toISOString());
        return this.current<B>(key)!;
      })();
    },
  };
}
export type HazardsRepository = ReturnType<typeof hazardsRepository>;
