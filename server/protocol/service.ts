/**
 * A bench sheet for a stored plan: the plan's own SI inputs and the exact shelf
 * revisions it used (so the same plan prints the same sheet), the chemicals'
 * current hazard data, rendered as HTML, Markdown or JSON. A plan that does not
 * fit throws SheetNotFitError, whose `sheet` renders the same way.
 */
import type { Mixture, Species } from '../engine/types.js';
import type { CandidateResult } from '../engine/planner.js';
import type { ChemicalRecord, SpeciesRecord } from '../schema/shelf.js';
import type { PlansRepository } from '../store/plans.js';
import type { ShelfRepository } from '../store/shelf.js';
import type { HazardsRepository } from '../store/hazards.js';
import { hazardLookup } from './hazards.js';
import { renderHtml, renderMarkdown } from './render.js';
import { buildSheet, chooseSeries, sheetRequestSchema, type ChosenSeries, type NotFitSheet, type Sheet } from './sheet.js';
import { issueList } from '../schema/mixture.js';
import { DomainError, InputError } from '../shelf/errors.js';
import { planSeriesSchema } from '../shelf/plans.js';
import type { PlanSeriesSI } from './sheet.js';

/** The plan's own dose series (a next plan's designed doses) in SI, or undefined (none, or one that no longer reads). */
function planSeries(request: unknown): PlanSeriesSI | undefined {
  const raw = (request as { series?: unknown } | null)?.series;
  if (raw === undefined) return undefined;
  const p = planSeriesSchema.safeParse(raw);
  if (!p.success) return undefined;
  return { candidate: p.data.candidate, doses: p.data.doses.map((d) => d.value), ...(p.data.from ? { from: p.data.from } : {}) };
}

export type SheetFormat = 'html' | 'md' | 'json';

export function sheetService(plans: PlansRepository, shelf: ShelfRepository, hazards: HazardsRepository) {
  return {
    /** Build the sheet model of plan `id` with the given (raw) options. @throws SheetNotFitError (422) with the explanation to render */
    build(id: number, rawOptions: unknown, printedAt = new Date().toISOString()): Sheet {
      const parsed = sheetRequestSchema.safeParse(rawOptions ?? {});
      if (!parsed.success) throw new InputError(issueList(parsed.error));
      const plan = plans.get(id);
      const series = planSeries(plan.request);
      const revs = plan.revisions.map((r) => ({ r, rev: shelf.byRevisionId(r.revisionId)! })).filter((x) => x.rev !== null);
      const species = new Map<string, SpeciesRecord>();
      const chemicals = new Map<string, ChemicalRecord>();
      for (const { rev } of revs) {
        if (rev.type === 'species') species.set(rev.id, rev.record as SpeciesRecord);
        else chemicals.set(rev.id, rev.record as ChemicalRecord);
      }
      const sheet = buildSheet(
        {
          plan: { ...(plan as object), request: { boundary: (plan.request as { boundary: string }).boundary, dosing: (plan.request as { dosing?: string }).dosing ?? 'add', ...(series ? { series } : {}) } } as unknown as { id: number; name: string; createdAt: string; request: { boundary: string; dosing: string; series?: PlanSeriesSI }; result: { candidates: CandidateResult[]; warnings?: { code: string; message: string }[] }; inputs: { base: Mixture; candidates: Species[] } },
          revisions: revs.map(({ r, rev }) => ({ role: r.role, id: rev.id, revision: rev.revision, revisionId: rev.revisionId })),
          speciesRecord: (k) => species.get(k) ?? null,
          chemicalRecord: (k) => chemicals.get(k) ?? null,
          hazards: hazardLookup(hazards),
          printedAt,
        },
        parsed.data,
      );
      // the options as sent (units as typed), so a filled-in sheet entered back rebuilds the same tubes
      return { ...sheet, request: { ...(rawOptions as Record<string, unknown> | undefined ?? {}), candidate: sheet.candidate.id } };
    },
    /**
     * The default dose series of a candidate's bench sheet (the plan's own series, else the default factors × the
     * reference), in SI, by the sheet's own code (chooseSeries) — without the stocks and volumes, so a sheet that
     * does not fit the bench still has its series. @throws InputError (not a candidate), DomainError (does not cross)
     */
    series(id: number, candidate: string): ChosenSeries & { candidate: string } {
      const plan = plans.get(id) as unknown as { request: unknown; result: { candidates: CandidateResult[] } };
      const cand = plan.result.candidates.find((c) => c.species === candidate);
      if (!cand) throw new InputError([{ path: 'candidate', message: `"${candidate}" is not a candidate of plan ${id}` }]);
      if (!cand.feasible || !cand.threshold) throw new DomainError('candidate-infeasible', `"${candidate}" cannot cross the boundary (${cand.reason}): ${cand.message}; it has no bench-sheet series, give the doses`);
      const req = sheetRequestSchema.parse({ candidate });
      return { ...chooseSeries(cand, req, planSeries(plan.request)), candidate };
    },
    /** A sheet, or the explanation of one that does not fit, in one format: HTML and Markdown from its sections, JSON the model itself. */
    render(sheet: Sheet | NotFitSheet, format: SheetFormat, paper: 'A4' | 'Letter' = 'A4'): string {
      if (format === 'html') return renderHtml(sheet, paper);
      if (format === 'md') return renderMarkdown(sheet);
      return JSON.stringify(sheet, null, 2) + '\n';
    },
  };
}
export type SheetService = ReturnType<typeof sheetService>;
