/**
 * The shelf repository: items (chemicals and species) with immutable revisions,
 * over prepared statements. Bodies are JSON documents validated by the caller
 * (server/schema/shelf.ts); this layer only stores, versions and finds them.
 *
 * Every write is a synchronous BEGIN IMMEDIATE transaction (db.ts writeTransaction) that reads
 * the current revision and writes the next one under the write lock. Nothing is ever deleted: retiring
 * is a revision with `retired = 1`, restoring one with `retired = 0`.
 */
import { writeTransaction, type Db } from './db.js';

export type ItemType = 'chemical' | 'species';
export type Action = 'create' | 'edit' | 'retire' | 'restore' | 'import';

export interface Revision<B = unknown> {
  /** the item's key (its id in mixtures and URLs) */
  id: string;
  type: ItemType;
  kind: string | null;
  name: string;
  /** revision number of this item, from 1 */
  revision: number;
  /** global id of this revision row (what plans record) */
  revisionId: number;
  /** whether this revision is the item's current one */
  current: boolean;
  action: Action;
  retired: boolean;
  author: string;
  note: string | null;
  createdAt: string;
  record: B;
}

export class NotFoundError extends Error {
  override readonly name = 'NotFoundError';
}

/** An edit based on a revision that is no longer current (`current`: a shelf item's, or a plan's name and notes). */
export class StaleRevisionError<C = Revision> extends Error {
  override readonly name = 'StaleRevisionError';
  constructor(
    message: string,
    readonly current: C,
  ) {
    super(message);
  }
}

export class DuplicateError extends Error {
  override readonly name = 'DuplicateError';
  constructor(
    message: string,
    readonly existing: Revision,
  ) {
    super(message);
  }
}

interface Row {
  key: string;
  type: ItemType;
  kind: string | null;
  name: string;
  current_revision: number;
  rev_id: number;
  revision: number;
  action: Action;
  retired: number;
  author: string;
  note: string | null;
  created_at: string;
  body: string;
}

const SELECT = `SELECT i.key, i.type, i.kind, i.name, i.current_revision,
  r.id AS rev_id, r.revision, r.action, r.retired, r.author, r.note, r.created_at, r.body
  FROM shelf_items i JOIN shelf_revisions r ON r.item_id = i.id`;

function toRevision<B>(row: Row): Revision<B> {
  return {
    id: row.key,
    type: row.type,
    kind: row.kind,
    name: row.name,
    revision: row.revision,
    revisionId: row.rev_id,
    current: row.revision === row.current_revision,
    action: row.action,
    retired: row.retired === 1,
    author: row.author,
    note: row.note,
    createdAt: row.created_at,
    record: JSON.parse(row.body) as B,
  };
}

export interface ListOptions {
  q?: string;
  kind?: string;
  includeRetired?: boolean;
  limit: number;
  offset: number;
}

export interface WriteMeta {
  author?: string;
  note?: string | null;
  /** ISO timestamp; now when absent */
  at?: string;
}

/** Whether a write of these fields would change nothing (same record, status, name and kind). */
export function sameContent(cur: Revision, fields: { kind: string | null; name: string; record: unknown; retired: boolean }): boolean {
  return JSON.stringify(cur.record) === JSON.stringify(fields.record) && cur.retired === fields.retired && cur.name === fields.name && cur.kind === fields.kind;
}

/** The repository over one database. */
export function shelfRepository(db: Db) {
  const st = {
    current: db.prepare(`${SELECT} WHERE i.type = ? AND i.key = ? AND r.revision = i.current_revision`),
    at: db.prepare(`${SELECT} WHERE i.type = ? AND i.key = ? AND r.revision = ?`),
    byRevisionId: db.prepare(`${SELECT} WHERE r.id = ?`),
    history: db.prepare(`${SELECT} WHERE i.type = ? AND i.key = ? ORDER BY r.revision`),
    item: db.prepare('SELECT id, current_revision, retired FROM shelf_items WHERE type = ? AND key = ?'),
    insertItem: db.prepare('INSERT INTO shelf_items (type, key, kind, name, current_revision, retired, created_at) VALUES (?, ?, ?, ?, 1, ?, ?)'),
    insertRevision: db.prepare(
      'INSERT INTO shelf_revisions (item_id, revision, action, retired, body, author, note, created_at) VALUES (?, ?, ?, ?, ?, ?, ?, ?)',
    ),
    updateItem: db.prepare('UPDATE shelf_items SET current_revision = ?, retired = ?, kind = ?, name = ? WHERE id = ?'),
    count: db.prepare('SELECT COUNT(*) AS n FROM shelf_items WHERE type = ?'),
  };

  function get<B>(type: ItemType, key: string): Revision<B> | null {
    const row = st.current.get(type, key) as Row | undefined;
    return row ? toRevision<B>(row) : null;
  }

  function mustGet<B>(type: ItemType, key: string): Revision<B> {
    const r = get<B>(type, key);
    if (!r) throw new NotFoundError(`no ${type} "${key}" on the shelf`);
    return r;
  }

  function write<B>(
    type: ItemType,
    key: string,
    action: Action,
    fields: { kind: string | null; name: string; record: B; retired: boolean },
    meta: WriteMeta,
    baseRevision: number | null,
  ): Revision<B> {
    const at = meta.at ?? new Date().toISOString();
    const author = meta.author ?? 'anonymous';
    const body = JSON.stringify(fields.record);
    return writeTransaction(db, () => {
      const item = st.item.get(type, key) as { id: number; current_revision: number; retired: number } | undefined;
      if (!item) {
        if (action !== 'create' && action !== 'import') throw new NotFoundError(`no ${type} "${key}" on the shelf`);
        const info = st.insertItem.run(type, key, fields.kind, fields.name, fields.retired ? 1 : 0, at);
        const itemId = Number(info.lastInsertRowid);
        st.insertRevision.run(itemId, 1, action, fields.retired ? 1 : 0, body, author, meta.note ?? null, at);
        return mustGet<B>(type, key);
      }
      if (action === 'create') throw new DuplicateError(`a ${type} "${key}" is already on the shelf`, mustGet(type, key));
      if (baseRevision !== null && baseRevision !== item.current_revision) {
        throw new StaleRevisionError(
          `${type} "${key}" has changed since revision ${baseRevision}: it is now at revision ${item.current_revision}; reload, merge your change and send it with baseRevision ${item.current_revision}`,
          mustGet(type, key),
        );
      }
      const next = item.current_revision + 1;
      st.insertRevision.run(item.id, next, action, fields.retired ? 1 : 0, body, author, meta.note ?? null, at);
      st.updateItem.run(next, fields.retired ? 1 : 0, fields.kind, fields.name, item.id);
      return mustGet<B>(type, key);
    });
  }

  return {
    get,
    mustGet,

    /** One revision of an item by its number. */
    at<B>(type: ItemType, key: string, revision: number): Revision<B> {
      const row = st.at.get(type, key, revision) as Row | undefined;
      if (!row) throw new NotFoundError(`${type} "${key}" has no revision ${revision}`);
      return toRevision<B>(row);
    },

    /** A revision by its global id. */
    byRevisionId<B>(id: number): Revision<B> | null {
      const row = st.byRevisionId.get(id) as Row | undefined;
      return row ? toRevision<B>(row) : null;
    },

    /** Every revision of an item, oldest first. */
    history<B>(type: ItemType, key: string): Revision<B>[] {
      const rows = st.history.all(type, key) as Row[];
      if (rows.length === 0) throw new NotFoundError(`no ${type} "${key}" on the shelf`);
      return rows.map((r) => toRevision<B>(r));
    },

    /** Current revisions, searched by key or name (case-insensitive substring), newest name order. */
    list<B>(type: ItemType, o: ListOptions): { items: Revision<B>[]; total: number } {
      const where = ['i.type = ?', 'r.revision = i.current_revision'];
      const args: unknown[] = [type];
      if (!o.includeRetired) where.push('i.retired = 0');
      if (o.kind) {
        where.push('i.kind = ?');
        args.push(o.kind);
      }
      if (o.q) {
        where.push("(i.key LIKE ? ESCAPE '\\' OR i.name LIKE ? ESCAPE '\\')");
        const like = `%${o.q.replace(/[\\%_]/g, (c) => `\\${c}`)}%`;
        args.push(like, like);
      }
      const clause = where.join(' AND ');
      const total = (db.prepare(`SELECT COUNT(*) AS n FROM shelf_items i JOIN shelf_revisions r ON r.item_id = i.id WHERE ${clause}`).get(...args) as { n: number }).n;
      const rows = db.prepare(`${SELECT} WHERE ${clause} ORDER BY i.name COLLATE NOCASE, i.key LIMIT ? OFFSET ?`).all(...args, o.limit, o.offset) as Row[];
      return { items: rows.map((r) => toRevision<B>(r)), total };
    },

    count(type: ItemType): number {
      return (st.count.get(type) as { n: number }).n;
    },

    create<B>(type: ItemType, key: string, fields: { kind: string | null; name: string; record: B }, meta: WriteMeta = {}): Revision<B> {
      return write(type, key, 'create', { ...fields, retired: false }, meta, null);
    },

    /** A new revision with a new record; `baseRevision` guards against lost updates (null: unguarded, for import). */
    edit<B>(type: ItemType, key: string, baseRevision: number | null, fields: { kind: string | null; name: string; record: B }, meta: WriteMeta = {}, action: Action = 'edit'): Revision<B> {
      return writeTransaction(db, () => {
        const cur = mustGet<B>(type, key);
        return write(type, key, action, { ...fields, retired: cur.retired }, meta, baseRevision);
      });
    },

    /** Create or revise from an import; unchanged when the record and status are the same. */
    upsert<B>(type: ItemType, key: string, fields: { kind: string | null; name: string; record: B; retired: boolean }, meta: WriteMeta = {}): 'created' | 'revised' | 'unchanged' {
      return writeTransaction(db, () => {
        const cur = get<B>(type, key);
        if (!cur) {
          write(type, key, 'import', fields, meta, null);
          return 'created';
        }
        if (sameContent(cur, fields)) return 'unchanged';
        write(type, key, 'import', fields, meta, null);
        return 'revised';
      });
    },

    /** Retire (hide from pickers, keep readable) or restore. */
    setRetired<B>(type: ItemType, key: string, retired: boolean, baseRevision: number | null, meta: WriteMeta = {}): Revision<B> {
      return writeTransaction(db, () => {
        const cur = mustGet<B>(type, key);
        if (cur.retired === retired) return cur;
        return write(type, key, retired ? 'retire' : 'restore', { kind: cur.kind, name: cur.name, record: cur.record, retired }, meta, baseRevision);
      });
    },

    /** Run several writes atomically, under the write lock from the start (BEGIN IMMEDIATE; nested ones are savepoints). */
    transaction<T>(fn: () => T): T {
      return writeTransaction(db, fn);
    },
  };
}

export type ShelfRepository = ReturnType<typeof shelfRepository>;
