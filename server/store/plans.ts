/** Stored plans over prepared statements (see migrations/0002_plans.sql). */
import type { Db } from './db.js';
import { NotFoundError } from './shelf.js';

export interface PlanRow<R = unknown, I = unknown, Q = unknown> {
  id: number;
  name: string;
  notes: string;
  author: string;
  createdAt: string;
  updatedAt: string;
  rerunOf: number | null;
  request: Q;
  inputs: I;
  result: R;
  revisions: { revisionId: number; role: 'base' | 'candidate' | 'chemical' }[];
}

interface Raw {
  id: number;
  name: string;
  notes: string;
  author: string;
  created_at: string;
  updated_at: string;
  rerun_of: number | null;
  request: string;
  inputs: string;
  result: string;
}

export function plansRepository(db: Db) {
  const st = {
    insert: db.prepare('INSERT INTO plans (name, notes, author, created_at, updated_at, request, inputs, result, rerun_of) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)'),
    link: db.prepare('INSERT OR IGNORE INTO plan_revisions (plan_id, revision_id, role) VALUES (?, ?, ?)'),
    get: db.prepare('SELECT * FROM plans WHERE id = ?'),
    links: db.prepare('SELECT revision_id, role FROM plan_revisions WHERE plan_id = ? ORDER BY role, revision_id'),
    list: db.prepare('SELECT id, name, notes, author, created_at, updated_at, rerun_of, request FROM plans ORDER BY id DESC LIMIT ? OFFSET ?'),
    count: db.prepare('SELECT COUNT(*) AS n FROM plans'),
    rename: db.prepare('UPDATE plans SET name = ?, notes = ?, updated_at = ? WHERE id = ?'),
  };
  const toRow = (r: Raw): PlanRow => ({
    id: r.id,
    name: r.name,
    notes: r.notes,
    author: r.author,
    createdAt: r.created_at,
    updatedAt: r.updated_at,
    rerunOf: r.rerun_of,
    request: JSON.parse(r.request),
    inputs: JSON.parse(r.inputs),
    result: JSON.parse(r.result),
    revisions: (st.links.all(r.id) as { revision_id: number; role: 'base' | 'candidate' | 'chemical' }[]).map((l) => ({ revisionId: l.revision_id, role: l.role })),
  });
  return {
    create(p: { name: string; notes: string; author: string; request: unknown; inputs: unknown; result: unknown; rerunOf: number | null; revisions: { revisionId: number; role: 'base' | 'candidate' | 'chemical' }[] }): PlanRow {
      const at = new Date().toISOString();
      return db.transaction(() => {
        const info = st.insert.run(p.name, p.notes, p.author, at, at, JSON.stringify(p.request), JSON.stringify(p.inputs), JSON.stringify(p.result), p.rerunOf);
        const id = Number(info.lastInsertRowid);
        for (const r of p.revisions) st.link.run(id, r.revisionId, r.role);
        return toRow(st.get.get(id) as Raw);
      })();
    },
    get(id: number): PlanRow {
      const r = st.get.get(id) as Raw | undefined;
      if (!r) throw new NotFoundError(`no plan ${id}`);
      return toRow(r);
    },
    list(limit: number, offset: number) {
      const rows = st.list.all(limit, offset) as Omit<Raw, 'inputs' | 'result'>[];
      return {
        total: (st.count.get() as { n: number }).n,
        items: rows.map((r) => ({ id: r.id, name: r.name, notes: r.notes, author: r.author, createdAt: r.created_at, updatedAt: r.updated_at, rerunOf: r.rerun_of, request: JSON.parse(r.request) as unknown })),
      };
    },
    rename(id: number, name: string, notes: string): PlanRow {
      this.get(id);
      st.rename.run(name, notes, new Date().toISOString(), id);
      return this.get(id);
    },
  };
}

export type PlansRepository = ReturnType<typeof plansRepository>;
