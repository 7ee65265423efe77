/**
 * The pipetting planner. Volumes in m³ (shown in µL), concentrations per volume
 * (particles m⁻³ or mol m⁻³): every transfer obeys C₁V₁ = C₂V₂ (common
 * practice, no source).
 *
 * Samples of the dose series share a master mix of buffer and base species
 * (made for every tube plus an overage, default 10 %, common practice); each
 * tube then gets the master mix, the dopant, a buffer top-up that makes the
 * volumes equal, and the fuel last. A transfer that would fall below the
 * smallest volume one should pipette (default 1 µL, common practice) is taken
 * from a 1:10 serial dilution instead, as many steps as needed; every
 * intermediate is made in a volume whose own transfers are at or above the
 * minimum too. A plan that cannot be carried out (stocks too dilute for the
 * sample volume) fails with what is wrong and what would fix it.
 */
import { DomainError } from '../shelf/errors.js';

export interface Component {
  id: string;
  label: string;
  /** stock concentration, per m³ */
  stock: number;
  /** how the stock is described on the sheet */
  stockText: string;
  /** unit word of the concentration ('particles' or 'mol') */
  per: 'particles' | 'mol';
}

export interface SampleSpec {
  name: string;
  role: 'series' | 'control';
  /** dopant dose (m⁻³) or null for a control without dopant */
  dose: number | null;
  /** target concentration of each component in the tube, per m³, by component id (a Map: any id is an ordinary key) */
  conc: ReadonlyMap<string, number>;
  /** whether the tube takes the master mix (base species) */
  usesMasterMix: boolean;
}

export interface PipettingOptions {
  sampleVolume: number;
  replicates: number;
  minVolume: number;
  overage: number;
  buffer: string;
}

export interface Transfer {
  /** what goes in */
  what: string;
  /** from which source: a stock, an intermediate dilution, the master mix or the buffer */
  from: string;
  volume: number;
}

export interface Dilution {
  name: string;
  component: string;
  /** dilution factor relative to the stock */
  factor: number;
  concentration: number;
  /** volume to make, m³ */
  volume: number;
  steps: Transfer[];
}

export interface PipettingPlan {
  dilutions: Dilution[];
  masterMix: { tubes: number; perTube: number; total: number; steps: Transfer[] } | null;
  samples: { name: string; role: SampleSpec['role']; dose: number | null; tubes: number; steps: Transfer[] }[];
  /** every pipetted volume, for checks */
  allVolumes: number[];
}

const UL = 1e-9;
const fmtUl = (v: number) => `${Number((v / UL).toPrecision(3))} µL`;

/** Round a volume up to three significant figures (never below what is needed). */
export function roundUp(v: number): number {
  if (v <= 0) return 0;
  const e = Math.floor(Math.log10(v)) - 2;
  const step = Math.pow(10, e);
  return Math.ceil(v / step - 1e-9) * step;
}

interface Use {
  component: string;
  /** volume per tube from the stock, before any dilution */
  stockVolume: number;
  tubes: number;
  level: number;
}

/**
 * Plan the pipetting for a set of samples.
 * @throws DomainError('impossible-volumes') with what would fix it
 */
export function planPipetting(components: Component[], samples: SampleSpec[], o: PipettingOptions, baseIds: string[], dopantId: string, fuelIds: string[]): PipettingPlan {
  const comp = new Map(components.map((c) => [c.id, c]));
  const tubes = o.replicates;
  const vol = (id: string, c: number) => (c * o.sampleVolume) / comp.get(id)!.stock;
  const ov = 1 + o.overage;

  // Master mix: the base species, per tube, identical in every tube that takes it.
  const mmSamples = samples.filter((s) => s.usesMasterMix);
  const mmTubes = mmSamples.length * tubes;
  const uses: Use[] = [];
  // Dilution level of a transfer: the smallest k with V·10^k ≥ min.
  const levelOf = (v: number) => (v >= o.minVolume || v === 0 ? 0 : Math.ceil(Math.log10(o.minVolume / v) - 1e-12));
  const baseMm = baseIds.map((id) => {
    const c = mmSamples[0]?.conc.get(id) ?? 0;
    const perTube = vol(id, c);
    const total = perTube * mmTubes * ov;
    const level = levelOf(total);
    if (c > 0 && mmTubes > 0) uses.push({ component: id, stockVolume: total, tubes: 1, level });
    return { id, perTube, total, level };
  });
  // Per tube: dopant and fuel.
  const perTube = samples.map((s) => {
    const d = s.conc.get(dopantId) ?? 0;
    const vd = d > 0 ? vol(dopantId, d) : 0;
    const ld = levelOf(vd);
    if (vd > 0) uses.push({ component: dopantId, stockVolume: vd, tubes, level: ld });
    const fuels = fuelIds.map((f) => {
      const c = s.conc.get(f) ?? 0;
      const v = c > 0 ? vol(f, c) : 0;
      const l = levelOf(v);
      if (v > 0) uses.push({ component: f, stockVolume: v, tubes, level: l });
      return { id: f, volume: v * Math.pow(10, l), level: l };
    });
    const bases = s.usesMasterMix
      ? []
      : baseIds.map((id) => {
          const cb = s.conc.get(id) ?? 0;
          const v = cb > 0 ? vol(id, cb) : 0;
          const l = levelOf(v);
          if (v > 0) uses.push({ component: id, stockVolume: v, tubes, level: l });
          return { id, volume: v * Math.pow(10, l), level: l };
        });
    return { s, dopant: { volume: vd * Math.pow(10, ld), level: ld }, fuels, bases };
  });

  // Serial dilutions, deepest first: volume = uses × overage + what the next level takes, ≥ 10·min.
  const dilutions: Dilution[] = [];
  const byComp = new Map<string, Use[]>();
  for (const u of uses) byComp.set(u.component, [...(byComp.get(u.component) ?? []), u]);
  const dilutionName = (id: string, level: number) => `${comp.get(id)!.label} 1:${Math.pow(10, level)}`;
  for (const [id, list] of byComp) {
    const maxLevel = Math.max(0, ...list.map((u) => u.level));
    let takeFromNext = 0;
    const made: Dilution[] = [];
    for (let k = maxLevel; k >= 1; k--) {
      const direct = list.filter((u) => u.level === k).reduce((a, u) => a + u.stockVolume * Math.pow(10, k) * u.tubes * ov, 0);
      const volume = roundUp(Math.max(direct + takeFromNext, 10 * o.minVolume));
      const take = roundUp(volume / 10);
      const c = comp.get(id)!;
      const from = k === 1 ? `${c.label} stock` : dilutionName(id, k - 1);
      made.push({
        name: dilutionName(id, k),
        component: id,
        factor: Math.pow(10, k),
        concentration: c.stock / Math.pow(10, k),
        volume: take * 10,
        steps: [
          { what: o.buffer, from: o.buffer, volume: take * 9 },
          { what: c.label, from, volume: take },
        ],
      });
      takeFromNext = take;
    }
    dilutions.push(...made.reverse());
  }

  // The per-tube volume budget: the variable part (dopant + fuels) is topped up with buffer to a common reserve W.
  const problems: string[] = [];
  const variable = perTube.filter((t) => t.s.usesMasterMix).map((t) => t.dopant.volume + t.fuels.reduce((a, f) => a + f.volume, 0));
  const reserve = variable.length > 0 ? Math.max(...variable) + o.minVolume : 0;
  const mmPerTube = o.sampleVolume - reserve;
  const baseInTube = baseMm.reduce((a, b) => a + b.perTube, 0);
  let masterMix: PipettingPlan['masterMix'] = null;
  if (mmSamples.length > 0) {
    if (mmPerTube < baseInTube || mmPerTube < o.minVolume) {
      const need = baseInTube + reserve;
      const top = perTube.reduce((best, t) => (t.dopant.volume > best.dopant.volume ? t : best));
      const dop = comp.get(dopantId)!;
      // How much more concentrated the dopant stock must be for the rest to fit: other + D/f ≤ V.
      const other = need - top.dopant.volume;
      const room = o.sampleVolume - other;
      const f = room > 0 ? top.dopant.volume / room : Infinity;
      const per = dop.per === 'mol' ? (x: number) => `${(x / 1000).toPrecision(3)} mol/L` : (x: number) => `${(x * 1e-6).toPrecision(3)} particles/mL`;
      const stockFix = Number.isFinite(f)
        ? `a ${dop.label} stock of at least ${per(dop.stock * f * 1.05)} (now ${per(dop.stock)}, ${dop.stockText})`
        : `more concentrated base and fuel stocks (they alone take ${fmtUl(other)})`;
      problems.push(
        `the components need ${fmtUl(need)} in a ${fmtUl(o.sampleVolume)} tube (the top dose alone takes ${fmtUl(top.dopant.volume)} of the ${dop.label} stock). ` +
          `Use a larger sample volume (at least ${fmtUl(roundUp(need * 1.05))}), ${stockFix}, or fewer or lower doses.`,
      );
    } else {
      const total = roundUp(mmPerTube * mmTubes * ov);
      const scaleTo = (v: number) => roundUp(v);
      const steps: Transfer[] = [];
      const bufferMm = (mmPerTube - baseInTube) * mmTubes * ov;
      if (bufferMm > 0) steps.push({ what: o.buffer, from: o.buffer, volume: Math.max(scaleTo(bufferMm), o.minVolume) });
      for (const b of baseMm) {
        if (b.perTube <= 0) continue;
        const c = comp.get(b.id)!;
        steps.push({ what: c.label, from: b.level === 0 ? `${c.label} stock` : dilutionName(b.id, b.level), volume: scaleTo(b.total * Math.pow(10, b.level)) });
      }
      masterMix = { tubes: mmTubes, perTube: mmPerTube, total, steps };
    }
  }

  const out: PipettingPlan['samples'] = [];
  for (const t of perTube) {
    const steps: Transfer[] = [];
    const s = t.s;
    const fuelTotal = t.fuels.reduce((a, f) => a + f.volume, 0);
    if (s.usesMasterMix) {
      if (masterMix) steps.push({ what: 'master mix', from: 'master mix', volume: mmPerTube });
      if (t.dopant.volume > 0) steps.push({ what: comp.get(dopantId)!.label, from: t.dopant.level === 0 ? `${comp.get(dopantId)!.label} stock` : dilutionName(dopantId, t.dopant.level), volume: t.dopant.volume });
      const top = reserve - t.dopant.volume - fuelTotal;
      if (top > 1e-18) steps.push({ what: o.buffer, from: o.buffer, volume: top });
    } else {
      const bases = t.bases.reduce((a, b) => a + b.volume, 0);
      const buf = o.sampleVolume - bases - t.dopant.volume - fuelTotal;
      if (buf < -1e-18) problems.push(`${s.name}: the components need more than the ${fmtUl(o.sampleVolume)} tube`);
      else if (buf > 1e-18 && buf < o.minVolume) problems.push(`${s.name}: the buffer would be ${fmtUl(buf)}, below the ${fmtUl(o.minVolume)} minimum; change the sample volume slightly`);
      if (buf > 1e-18) steps.push({ what: o.buffer, from: o.buffer, volume: buf });
      for (const b of t.bases) if (b.volume > 0) steps.push({ what: comp.get(b.id)!.label, from: b.level === 0 ? `${comp.get(b.id)!.label} stock` : dilutionName(b.id, b.level), volume: b.volume });
      if (t.dopant.volume > 0) steps.push({ what: comp.get(dopantId)!.label, from: t.dopant.level === 0 ? `${comp.get(dopantId)!.label} stock` : dilutionName(dopantId, t.dopant.level), volume: t.dopant.volume });
    }
    for (const f of t.fuels) if (f.volume > 0) steps.push({ what: comp.get(f.id)!.label, from: f.level === 0 ? `${comp.get(f.id)!.label} stock` : dilutionName(f.id, f.level), volume: f.volume });
    out.push({ name: s.name, role: s.role, dose: s.dose, tubes, steps });
  }
  if (problems.length > 0) throw new DomainError('impossible-volumes', problems.join(' '));
  const allVolumes = [...dilutions.flatMap((d) => d.steps.map((x) => x.volume)), ...(masterMix?.steps.map((x) => x.volume) ?? []), ...out.flatMap((s) => s.steps.map((x) => x.volume))];
  return { dilutions, masterMix, samples: out, allVolumes };
}
