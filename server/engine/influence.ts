/**
 * Which coefficients the predicted state of a mixture can depend on, decided from its structure alone
 * (docs/model.md §13, "What the tubes can tell"): the model update must not move, report or write a
 * coefficient the tubes' model does not depend on — its posterior would be its prior, any move Monte Carlo
 * noise.
 *
 * From the linear model of docs/model.md §3 (server/engine/model.ts): the particles feel the chemicals only
 * through P = ρ μ c*, so J = −k² [𝔇 + P G Q'ᵀ] depends on a chemical's field only if a species moves in it
 * (μ ≠ 0) — or if it feeds one that does: the chemical response solves (k² D_c + R) δc = Qᵀ δρ, and R couples
 * a chemical to another only through a saturating turnover (R_pf = −y ρ V K/(K + c_f)², the product's row,
 * the fuel's column). So the chemicals that *reach* a mobility are those moved in, closed backward over the
 * turnovers (a fuel reaches when its product does). And a chemical's response is not zero only if it has a
 * source in Qᵀ δρ — a constant activity on it, a saturating turnover of it while present (rate V c/(K + c)),
 * a saturating turnover making it from a present fuel (y V c_f/(K + c_f)) — or is made from a chemical that
 * has one: the *perturbed* chemicals, the sources closed forward over the turnovers. A chemical *matters*
 * when it is both; its diffusivity, loss rate and level, and every mobility and activity on it, then enter J.
 * Of any other chemical, none does (its block of k² D_c + R feeds no row P reads, or its response is zero),
 * and a solubility or a material density enters only the practical checks (§8), never the state.
 */
import type { Mixture, Species } from './types.js';

/** What a coefficient is, as the update names it (update.ts UncertainParameter). */
export interface CoefficientAt {
  owner: 'chemical' | 'species';
  id: string;
  field: string;
  /** the coupling's chemical for mobility and activity fields; else null */
  chemical: string | null;
}

export interface Influence {
  /** chemicals whose coefficients the state depends on */
  matters: Set<string>;
  /** chemicals some species in the mixture moves in */
  moved: Set<string>;
  /** chemicals whose field responds to the particles (a source, or made from a chemical that has one) */
  perturbed: Set<string>;
  /** chemicals that reach a mobility (moved in, or turned into a chemical that is) */
  reaches: Set<string>;
  /** null when the state can depend on the coefficient; else why it cannot, in words */
  reason(c: CoefficientAt): string | null;
}

const uncertainOrNonzero = (v: number, sd: number | undefined) => v !== 0 || (sd ?? 0) > 0;

/**
 * The structural influence of a mixture's coefficients on its predicted state (docs/model.md §13). For an
 * update, `mix` is what the tubes contain: the base species, the observed candidate, the chemicals at their
 * levels (`tubesMixture`).
 */
export function influence(mix: Mixture): Influence {
  const level = new Map(mix.chemicals.map((c) => [c.id, c.concentration] as const));
  const present = (id: string) => (level.get(id) ?? 0) > 0;
  const coupled = new Set<string>();
  const moved = new Set<string>();
  const sources = new Set<string>();
  /** fuel → products of its saturating turnovers */
  const makes = new Map<string, Set<string>>();
  for (const sp of mix.species) {
    for (const c of sp.couplings) {
      coupled.add(c.chemical);
      if (uncertainOrNonzero(c.mobility, c.sd?.mobility)) moved.add(c.chemical);
      const a = c.activity;
      if (a === null) continue;
      coupled.add(c.chemical);
      if (a.kind === 'constant') {
        if (uncertainOrNonzero(a.rate, c.sd?.rate)) sources.add(c.chemical);
        continue;
      }
      if (a.product !== null) {
        coupled.add(a.product);
        makes.set(c.chemical, (makes.get(c.chemical) ?? new Set()).add(a.product));
      }
      if (present(c.chemical) && uncertainOrNonzero(a.maxRate, c.sd?.maxRate)) {
        sources.add(c.chemical);
        if (a.product !== null) sources.add(a.product);
      }
    }
  }
  // perturbed: the sources, closed forward over the turnovers (fuel → product)
  const perturbed = new Set(sources);
  for (let grew = true; grew; ) {
    grew = false;
    for (const [f, ps] of makes) {
      if (!perturbed.has(f)) continue;
      for (const p of ps) {
        if (perturbed.has(p)) continue;
        perturbed.add(p);
        grew = true;
      }
    }
  }
  // reaches: the moved, closed backward (a fuel whose product reaches)
  const reaches = new Set(moved);
  for (let grew = true; grew; ) {
    grew = false;
    for (const [f, ps] of makes) {
      if (reaches.has(f) || ![...ps].some((p) => reaches.has(p))) continue;
      reaches.add(f);
      grew = true;
    }
  }
  const matters = new Set([...perturbed].filter((s) => reaches.has(s)));
  const why = (s: string): string | null => {
    if (matters.has(s)) return null;
    if (!coupled.has(s) && !present(s)) return `no species in the tubes couples to ${s}, and the tubes hold none of it: it is not in the tubes' mixture`;
    if (!reaches.has(s))
      return `no species in the tubes moves in ${s}${makes.has(s) ? `, nor in a chemical it is turned into` : ''}: the particles feel chemicals only through their mobilities, so ${s} cannot change any tube's predicted state`;
    return `${s} is absent from the tubes and nothing in them makes it: its field stays uniform, so the mobilities to it and its own coefficients cannot change any tube's predicted state`;
  };
  return {
    matters,
    moved,
    perturbed,
    reaches,
    reason(c) {
      if (c.owner === 'chemical') {
        if (c.field === 'solubility') return 'a solubility enters only the practical checks (gas, docs/model.md §8), never the predicted state';
        return why(c.id);
      }
      if (c.field === 'materialDensity') return 'a material density enters only the settling check (docs/model.md §8), never the predicted state';
      return c.chemical === null ? null : why(c.chemical);
    },
  };
}

/** What the tubes of a plan contain: the base species, the candidate (at a dose), the chemicals at their levels. */
export function tubesMixture(base: Mixture, d: Species): Mixture {
  return { ...base, species: [...base.species.filter((s) => s.id !== d.id), d] };
}
