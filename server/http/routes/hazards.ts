/**
 * Hazard data of chemicals and species (versioned, immutable versions; docs/model.md §11):
 *
 *   GET  /api/chemicals/:id/hazards   current hazard data and their version history
 *   PUT  /api/chemicals/:id/hazards   a new version { baseVersion, hazards, author?, note? } (409 on a stale baseVersion)
 *   GET  /api/species/:id/hazards     the same for a species (bands by form: powder, solution, suspension)
 *   PUT  /api/species/:id/hazards     a new version; the species' data must state the forms they cover
 *
 * A GET of an item with no hazard data answers 200 with `current: null` and the words to print
 * (`noData`: not classified, read the supplier's safety data sheet), never "no hazard".
 */
import type { FastifyPluginAsync } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { hazardSetSchema, NO_HAZARD_DATA_SENTENCE, speciesHazardSetSchema } from '../../protocol/hazards.js';
import { keySchema } from '../../schema/shelf.js';
import type { HazardKind } from '../../store/hazards.js';
import { authorship } from '../access.js';

const meta = { author: z.string().min(1).max(200).optional(), note: z.string().max(2000).optional() };

export const hazardRoutes: FastifyPluginAsync = async (base) => {
  const app = base.withTypeProvider<ZodTypeProvider>();
  const read = (kind: HazardKind, id: string) => {
    app.shelf.repo.mustGet(kind, id);
    const repo = app.hazards.of(kind);
    const current = repo.current(id);
    return {
      [kind]: id,
      current,
      ...(current === null ? { noData: NO_HAZARD_DATA_SENTENCE } : {}),
      history: repo.history(id).map((h) => ({ version: h.version, author: h.author, note: h.note, createdAt: h.createdAt })),
    };
  };

  // The same two routes for each kind; only the path, the body's schema and the words differ.
  const kinds = [
    {
      kind: 'chemical',
      path: '/api/chemicals/:id/hazards',
      set: hazardSetSchema,
      get: "A chemical's hazard bands (current) and their version history",
      put: "Replace a chemical's hazard data: a new version, refused with 409 if baseVersion is not the current one (0 for the first)",
    },
    {
      kind: 'species',
      path: '/api/species/:id/hazards',
      set: speciesHazardSetSchema,
      get: "A species' hazard bands by form (current) and their version history",
      put: "Replace a species' hazard data (bands by form; `forms` names the forms covered): a new version, refused with 409 if baseVersion is not the current one (0 for the first)",
    },
  ] as const;
  for (const k of kinds) {
    app.get(k.path, {
      schema: { tags: ['shelf'], summary: k.get, params: z.object({ id: keySchema }) },
      handler: async (req) => read(k.kind, req.params.id),
    });
    app.put(k.path, {
      schema: { tags: ['shelf'], summary: k.put, params: z.object({ id: keySchema }), body: z.strictObject({ baseVersion: z.number().int().min(0), hazards: k.set, ...meta }) },
      handler: async (req) => {
        app.shelf.repo.mustGet(k.kind, req.params.id);
        return app.hazards.of(k.kind).write(req.params.id, req.body.baseVersion, req.body.hazards, authorship(req, req.body));
      },
    });
  }
};
