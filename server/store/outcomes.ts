/**
 * Outcome sets over prepared statements (migrations/0007_outcomes.sql): what each tube of a plan's bench sheet
 * did, per plan and candidate, as immutable revisions (triggers refuse UPDATE, DELETE and an insert over an
 * existing revision). A write names the revision it was based on (0 for the first) and is refused with
 * `StaleRevisionError` (409) when another came first. Validation (tube codes against the rebuilt sheet, states,
 * units) is the caller's (server/protocol/outcomes.ts); this layer stores SI numbers as given.
 */
import { writeTransaction, type Db } from './db.js';
import { StaleRevisionError, type Revision } from './shelf.js';

export type OutcomeState = 'stable' | 'stationary' | 'oscillatory' | 'unclear';
export const OUTCOME_STATES: OutcomeState[] = ['stable', 'stationary', 'oscillatory', 'unclear'];

export interface OutcomeTube {
  /** the lid code as the sheet prints it (C0a, D3b, CF …) */
  tube: string;
  /** the sample's kind on the sheet: series, no-dopant, no-fuel, dopant-alone */
  kind: string;
  /** delivered dopant dose, m⁻³ (null where the sheet has none) */
  dose: number | null;
  state: OutcomeState;
  /** s, null when not seen or not recorded */
  onsetTime: number | null;
  /** m, null when not seen or not recorded */
  patternLength: number | null;
  notes: string;
}

export interface OutcomeSet {
  id: number;
  planId: number;
  /** revision of this plan and candidate's outcomes, from 1 */
  revision: number;
  candidate: string;
  /** the sheet options the tube codes refer to, as sent (units as typed), with the candidate filled in */
  sheetOptions: Record<string, unknown>;
  tubes: OutcomeTube[];
  author: string;
  note: string | null;
  createdAt: string;
}

interface Raw {
  id: number;
  plan_id: number;
  candidate: string;
  revision: number;
  sheet_options: string;
  tubes: string;
  author: string;
  note: string | null;
  created_at: string;
}

const toSet = (r: Raw): OutcomeSet => ({
  id: r.id,
  planId: r.plan_id,
  revision: r.revision,
  candidate: r.candidate,
  sheetOptions: JSON.parse(r.sheet_options) as Record<string, unknown>,
  tubes: JSON.parse(r.tubes) as OutcomeTube[],
  author: r.author,
  note: r.note,
  createdAt: r.created_at,
});

export function outcomesRepository(db: Db) {
  const st = {
    current: db.prepare('SELECT * FROM outcome_sets WHERE plan_id = ? AND candidate = ? ORDER BY revision DESC LIMIT 1'),
    latest: db.prepare('SELECT * FROM outcome_sets WHERE plan_id = ? ORDER BY id DESC LIMIT 1'),
    history: db.prepare('SELECT * FROM outcome_sets WHERE plan_id = ? ORDER BY candidate, revision'),
    byId: db.prepare('SELECT * FROM outcome_sets WHERE id = ?'),
    byRevision: db.prepare('SELECT * FROM outcome_sets WHERE plan_id = ? AND candidate = ? AND revision = ?'),
    insert: db.prepare('INSERT INTO outcome_sets (plan_id, candidate, revision, sheet_options, tubes, author, note, created_at) VALUES (?, ?, ?, ?, ?, ?, ?, ?)'),
  };
  const api = {
    /** The current set of a plan for one candidate; without a candidate, the plan's most recently written set. */
    current(planId: number, candidate?: string): OutcomeSet | null {
      const r = (candidate === undefined ? st.latest.get(planId) : st.current.get(planId, candidate)) as Raw | undefined;
      return r ? toSet(r) : null;
    },
    /** Every set of a plan, by candidate then revision. */
    history(planId: number): OutcomeSet[] {
      return (st.history.all(planId) as Raw[]).map(toSet);
    },
    get(id: number): OutcomeSet | null {
      const r = st.byId.get(id) as Raw | undefined;
      return r ? toSet(r) : null;
    },
    revision(planId: number, candidate: string, revision: number): OutcomeSet | null {
      const r = st.byRevision.get(planId, candidate, revision) as Raw | undefined;
      return r ? toSet(r) : null;
    },
    /**
     * Write the next revision for (plan, candidate). `baseRevision`: the revision the writer saw (0 for none);
     * null skips the check (not used by the service). @throws StaleRevisionError (409) when it is not the current one
     */
    write(p: { planId: number; candidate: string; sheetOptions: Record<string, unknown>; tubes: OutcomeTube[]; author?: string; note?: string | null }, baseRevision: number | null): OutcomeSet {
      return writeTransaction(db, () => {
        const cur = api.current(p.planId, p.candidate);
        const curRevision = cur?.revision ?? 0;
        if (baseRevision !== null && baseRevision !== curRevision) {
          throw new StaleRevisionError(
            `the outcomes of plan ${p.planId} for ${p.candidate} are at revision ${curRevision}, not ${baseRevision}; reload and send baseRevision ${curRevision} (on the command line: --base-revision ${curRevision})`,
            cur as unknown as Revision,
          );
        }
        const info = st.insert.run(p.planId, p.candidate, curRevision + 1, JSON.stringify(p.sheetOptions), JSON.stringify(p.tubes), p.author ?? 'anonymous', p.note ?? null, new Date().toISOString());
        return api.get(Number(info.lastInsertRowid))!;
      });
    },
  };
  return api;
}
export type OutcomesRepository = ReturnType<typeof outcomesRepository>;
