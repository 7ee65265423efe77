/** Stored raw measurements and their applications to species revisions. */
import { writeTransaction, type Db } from './db.js';
import { NotFoundError } from './shelf.js';

export interface Measurement {
  id: number;
  species: string;
  method: 'msd' | 'kinetics' | 'drift';
  options: unknown;
  /** the raw data as given: CSV text or a JSON table */
  data: unknown;
  fileName: string | null;
  fit: unknown;
  author: string;
  note: string | null;
  createdAt: string;
  applications: { revisionId: number; fields: string[]; createdAt: string }[];
}

interface Raw {
  id: number;
  species_key: string;
  method: Measurement['method'];
  options: string;
  data: string;
  file_name: string | null;
  fit: string;
  author: string;
  note: string | null;
  created_at: string;
}

export function measurementsRepository(db: Db) {
  const st = {
    insert: db.prepare('INSERT INTO measurements (species_key, method, options, data, file_name, fit, author, note, created_at) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)'),
    get: db.prepare('SELECT * FROM measurements WHERE id = ?'),
    bySpecies: db.prepare('SELECT * FROM measurements WHERE species_key = ? ORDER BY id'),
    apps: db.prepare('SELECT revision_id, fields, created_at FROM measurement_applications WHERE measurement_id = ? ORDER BY revision_id'),
    apply: db.prepare('INSERT INTO measurement_applications (measurement_id, revision_id, fields, created_at) VALUES (?, ?, ?, ?)'),
  };
  const toM = (r: Raw): Measurement => ({
    id: r.id,
    species: r.species_key,
    method: r.method,
    options: JSON.parse(r.options),
    data: JSON.parse(r.data),
    fileName: r.file_name,
    fit: JSON.parse(r.fit),
    author: r.author,
    note: r.note,
    createdAt: r.created_at,
    applications: (st.apps.all(r.id) as { revision_id: number; fields: string; created_at: string }[]).map((a) => ({ revisionId: a.revision_id, fields: JSON.parse(a.fields), createdAt: a.created_at })),
  });
  return {
    create(m: { species: string; method: Measurement['method']; options: unknown; data: unknown; fileName: string | null; fit: unknown; author: string; note: string | null }): Measurement {
      return writeTransaction(db, () => {
        const info = st.insert.run(m.species, m.method, JSON.stringify(m.options), JSON.stringify(m.data), m.fileName, JSON.stringify(m.fit), m.author, m.note, new Date().toISOString());
        return this.get(Number(info.lastInsertRowid));
      });
    },
    get(id: number): Measurement {
      const r = st.get.get(id) as Raw | undefined;
      if (!r) throw new NotFoundError(`no measurement ${id}`);
      return toM(r);
    },
    forSpecies(key: string): Measurement[] {
      return (st.bySpecies.all(key) as Raw[]).map(toM);
    },
    recordApplication(id: number, revisionId: number, fields: string[]): void {
      writeTransaction(db, () => st.apply.run(id, revisionId, JSON.stringify(fields), new Date().toISOString()));
    },
  };
}
export type MeasurementsRepository = ReturnType<typeof measurementsRepository>;
