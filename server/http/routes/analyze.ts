/** Linear stability of a sample built from shelf species, or of a whole mixture file (computed in the worker pool). */
import type { FastifyPluginAsync } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { mixtureSchema, toEngineMixture } from '../../schema/mixture.js';
import { shelfSampleSchema } from '../../shelf/service.js';

export const analyzeRoutes: FastifyPluginAsync = async (base) => {
  const app = base.withTypeProvider<ZodTypeProvider>();
  app.post('/api/analyze', {
    schema: {
      tags: ['analysis'],
      summary: 'Stability of shelf species at given amounts in a chamber: the analyze contract plus the revisions used',
      body: shelfSampleSchema,
    },
    handler: async (req) => {
      const built = app.shelf.buildMixture(req.body);
      const result = await app.compute('analyze', { mixture: built.mixture });
      return { ...result, warnings: [...built.warnings, ...result.warnings], revisions: built.revisions, mixture: built.mixture };
    },
  });
  app.post('/api/analyze/mixture', {
    schema: { tags: ['analysis'], summary: 'Stability of a mixture file (the same JSON brink analyze reads)', body: mixtureSchema },
    handler: async (req) => app.compute('analyze', { mixture: toEngineMixture(req.body) }),
  });
};
