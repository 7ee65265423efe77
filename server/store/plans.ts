/**
 * Stored plans over prepared statements (see migrations/0002_plans.sql). A plan's name and notes
 * are revisions (migrations/0008: plan_text_revisions, immutable); `rename` writes the next one,
 * guarded by the revision it was based on, and the plan row keeps the newest as `name`/`notes`.
 */
import { writeTransaction, type Db } from './db.js';
import { NotFoundError, StaleRevisionError } from './shelf.js';

/** One revision of a plan's name and notes. */
export interface PlanTextRevision {
  revision: number;
  name: string;
  notes: string;
  author: string;
  /** what the writer said about the change (with a token, the author the client gave) */
  note: string | null;
  createdAt: string;
}

export interface PlanRow<R = unknown, I = unknown, Q = unknown> {
  id: number;
  name: string;
  notes: string;
  author: string;
  createdAt: string;
  updatedAt: string;
  rerunOf: number | null;
  /** the revision of the name and notes (what PATCH's baseRevision names) */
  revision: number;
  /** every name and notes the plan has had, oldest first */
  history: PlanTextRevision[];
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

interface TextRaw {
  revision: number;
  name: string;
  notes: string;
  author: string;
  note: string | null;
  created_at: string;
}
const toText = (t: TextRaw): PlanTextRevision => ({ revision: t.revision, name: t.name, notes: t.notes, author: t.author, note: t.note, createdAt: t.created_at });

export function plansRepository(db: Db) {
  const st = {
    insert: db.prepare('INSERT INTO plans (name, notes, author, created_at, updated_at, request, inputs, result, rerun_of) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)'),
    link: db.prepare('INSERT INTO plan_revisions (plan_id, revision_id, role) VALUES (?, ?, ?)'),
    get: db.prepare('SELECT * FROM plans WHERE id = ?'),
    links: db.prepare('SELECT revision_id, role FROM plan_revisions WHERE plan_id = ? ORDER BY role, revision_id'),
    list: db.prepare(
      'SELECT id, name, notes, author, created_at, updated_at, rerun_of, request, (SELECT MAX(revision) FROM plan_text_revisions t WHERE t.plan_id = plans.id) AS revision FROM plans ORDER BY id DESC LIMIT ? OFFSET ?',
    ),
    count: db.prepare('SELECT COUNT(*) AS n FROM plans'),
    texts: db.prepare('SELECT revision, name, notes, author, note, created_at FROM plan_text_revisions WHERE plan_id = ? ORDER BY revision'),
    insertText: db.prepare('INSERT INTO plan_text_revisions (plan_id, revision, name, notes, author, note, created_at) VALUES (?, ?, ?, ?, ?, ?, ?)'),
    rename: db.prepare('UPDATE plans SET name = ?, notes = ?, updated_at = ? WHERE id = ?'),
  };
  const history = (id: number) => (st.texts.all(id) as TextRaw[]).map(toText);
  const toRow = (r: Raw): PlanRow => {
    const h = history(r.id);
    return {
      id: r.id,
      name: r.name,
      notes: r.notes,
      author: r.author,
      createdAt: r.created_at,
      updatedAt: r.updated_at,
      rerunOf: r.rerun_of,
      revision: h.length > 0 ? h[h.length - 1]!.revision : 0,
      history: h,
      request: JSON.parse(r.request),
      inputs: JSON.parse(r.inputs),
      result: JSON.parse(r.result),
      revisions: (st.links.all(r.id) as { revision_id: number; role: 'base' | 'candidate' | 'chemical' }[]).map((l) => ({ revisionId: l.revision_id, role: l.role })),
    };
  };
  return {
    create(p: { name: string; notes: string; author: string; request: unknown; inputs: unknown; result: unknown; rerunOf: number | null; revisions: { revisionId: number; role: 'base' | 'candidate' | 'chemical' }[] }): PlanRow {
      const at = new Date().toISOString();
      return writeTransaction(db, () => {
        const info = st.insert.run(p.name, p.notes, p.author, at, at, JSON.stringify(p.request), JSON.stringify(p.inputs), JSON.stringify(p.result), p.rerunOf);
        const id = Number(info.lastInsertRowid);
        st.insertText.run(id, 1, p.name, p.notes, p.author, null, at);
        // each (revision, role) once: the links are immutable and a repeated insert is refused (0008)
        const seen = new Set<string>();
        for (const r of p.revisions) {
          const k = `${r.revisionId}:${r.role}`;
          if (seen.has(k)) continue;
          seen.add(k);
          st.link.run(id, r.revisionId, r.role);
        }
        return toRow(st.get.get(id) as Raw);
      });
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
        items: (rows as (Omit<Raw, 'inputs' | 'result'> & { revision: number | null })[]).map((r) => ({
          id: r.id,
          name: r.name,
          notes: r.notes,
          revision: r.revision ?? 0,
          author: r.author,
          createdAt: r.created_at,
          updatedAt: r.updated_at,
          rerunOf: r.rerun_of,
          request: JSON.parse(r.request) as unknown,
        })),
      };
    },
    /**
     * A new revision of the name and notes (an absent one is kept), refused with StaleRevisionError
     * (→ 409 stale-revision, with the current name and notes) unless `baseRevision` is the current one.
     */
    rename(id: number, baseRevision: number, change: { name?: string; notes?: string }, author = 'anonymous', note: string | null = null): PlanRow {
      return writeTransaction(db, () => {
        const plan = this.get(id);
        if (baseRevision !== plan.revision) {
          const cur = plan.history[plan.history.length - 1];
          throw new StaleRevisionError(
            `plan ${id}'s name and notes have changed since revision ${baseRevision}: they are now at revision ${plan.revision}; reload, merge your change and send it with baseRevision ${plan.revision}`,
            cur,
          );
        }
        const name = change.name ?? plan.name;
        const notes = change.notes ?? plan.notes;
        if (name === plan.name && notes === plan.notes) return plan; // nothing to write
        const at = new Date().toISOString();
        st.insertText.run(id, plan.revision + 1, name, notes, author, note, at);
        st.rename.run(name, notes, at, id);
        return this.get(id);
      });
    },
  };
}

export type PlansRepository = ReturnType<typeof plansRepository>;
