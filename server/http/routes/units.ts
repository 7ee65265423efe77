/**
 * POST /api/units/read — read a value as typed (`"0.22 um^2/s"`, `{ "value": "50 mM", "sd": "5 mM" }`)
 * for one kind of quantity and answer its SI value, its uncertainty and how brink shows it: what the
 * pages call as someone types, so a field shows the SI value or the error inline with the same
 * parser the service uses when the form is sent. Nothing is stored; a wrong unit is a 400 in words.
 */
import type { FastifyPluginAsync } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { LIMITS } from '../../schema/limits.js';
import { DIMENSIONS, formatDimension, parseQuantity, UnitError, type Sign } from '../../units/index.js';
import { fmt, fmtWithSd, type DisplayKind } from '../../units/display.js';

/**
 * The readable quantities: the shelf's dimensions and a volume (a sample, a tube or a chamber, as the bench
 * sheet's options take them), which the shelf itself has no field of.
 */
const READABLE = { ...DIMENSIONS, volume: { length: 3 } } as const;
type Readable = keyof typeof READABLE;

/** How each readable quantity is shown (server/units/display.ts). */
const DISPLAY: Record<Readable, DisplayKind> = {
  dimensionless: 'fraction',
  length: 'length',
  time: 'time',
  rate: 'rate',
  diffusivity: 'diffusivity',
  numberDensity: 'numberDensity',
  concentration: 'concentration',
  amountRate: 'amountRate',
  mobility: 'mobility',
  massDensity: 'massDensity',
  molarMass: 'molarMass',
  temperature: 'temperature',
  viscosity: 'viscosity',
  volume: 'volume',
};

const SI_UNIT: Record<Readable, string> = {
  dimensionless: '1',
  length: 'm',
  time: 's',
  rate: '1/s',
  diffusivity: 'm^2/s',
  numberDensity: '1/m^3',
  concentration: 'mol/m^3',
  amountRate: 'mol/s',
  mobility: 'm^5/(mol*s)',
  massDensity: 'kg/m^3',
  molarMass: 'kg/mol',
  temperature: 'K',
  viscosity: 'Pa*s',
  volume: 'm^3',
};

const text = z.union([z.string().max(LIMITS.name), z.number()]);
const quantities = Object.keys(READABLE) as [Readable, ...Readable[]];

export const unitRoutes: FastifyPluginAsync = async (base) => {
  const app = base.withTypeProvider<ZodTypeProvider>();
  app.post('/api/units/read', {
    schema: {
      tags: ['meta'],
      summary: 'Read a value as typed for one kind of quantity: its SI value, uncertainty and display text (nothing stored)',
      description: `quantity is one of ${quantities.join(', ')}. value is a number (SI), a string with a unit, or { value, sd }. sign: positive, nonnegative or any (default any). A value the parser cannot read, or of another dimension, is still a 200 — reading is what was asked, and "cannot" is an answer — with ok: false and a message that says what was expected (a page checks every keystroke: a refusal is no error). A malformed request is a 400.`,
      body: z.strictObject({
        value: z.union([text, z.strictObject({ value: text, sd: text.optional() })]),
        quantity: z.enum(quantities),
        sign: z.enum(['positive', 'nonnegative', 'any']).default('any'),
      }),
    },
    handler: async (req) => {
      const { value, quantity, sign } = req.body;
      try {
        const q = parseQuantity(value, { dimension: READABLE[quantity], sign: sign as Sign }, 'value');
        const kind = DISPLAY[quantity];
        return {
          ok: true as const,
          si: q.value,
          sd: q.sd,
          siUnit: SI_UNIT[quantity],
          unit: q.unit,
          dimension: formatDimension(READABLE[quantity]),
          display: q.sd > 0 ? fmtWithSd(q.value, q.sd, kind) : fmt(q.value, kind),
        };
      } catch (e) {
        if (e instanceof UnitError) return { ok: false as const, error: 'unit', message: e.message };
        throw e;
      }
    },
  });
};
