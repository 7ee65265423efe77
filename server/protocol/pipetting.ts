/**
 * The pipetting planner (docs/model.md §11). Volumes in m³ (shown in µL),
 * concentrations per volume (particles m⁻³ or mol m⁻³): every transfer obeys
 * the dilution relation C₁V₁ = C₂V₂.
 *
 * The bench gets one table, one row per sample (its replicates as a count,
 * each tube with a code for its lid), and before it the short steps that make
 * the liquids the table pipettes:
 *
 * - a working solution of a chemical (W1, W2 …) where its stock would be a
 *   small volume per tube (below `workingBelow`, default 5 µL) or where the
 *   stock is classified above the working solution (hazards.ts `classify` on
 *   the mass fractions handled); the working concentration is a round one
 *   (1, 2, 5 × 10^k) that puts about a tenth of the sample volume (at least
 *   twice `workingBelow`) into each tube;
 * - 1:10 serial dilutions (S1, S2 …) where a volume would fall below the
 *   smallest one to pipette (default 1 µL);
 * - a master mix (MM) of buffer and the base species for every tube that takes
 *   it, plus an overage (default 10 %).
 *
 * Each tube then gets, in order of addition: buffer (the remainder, so that the
 * tube holds exactly the sample volume), master mix or base stocks, the dopant,
 * the chemicals, the fuel last; then it is mixed and the clock started. Every
 * other volume is rounded to what a pipette delivers (dilution.ts), and the
 * dose delivered is computed back from the rounded volumes and the
 * concentrations as made. A plan that cannot be carried out (stocks too dilute
 * for the sample volume) fails with what is wrong and what would fix it.
 */
import { WATER_DENSITY_25C } from '../engine/constants.js';
import { fmt, fmtMolar, type AmountContext } from '../units/display.js';
import { DomainError } from '../shelf/errors.js';
import { classify, type HazardSet } from './hazards.js';
import { decideWorking, nextUp125, ROUNDING_RULE, roundDownToPipette, roundToPipette, roundUpToPipette, tenfoldTake, WORKING_BELOW, workingConcentration, type WorkingDecision } from './dilution.js';
import { formatNumber, table, type Block, type Column, type Row, type Section } from './sections.js';

export interface Component {
  id: string;
  label: string;
  /** stock concentration, per m³ */
  stock: number;
  /** how the stock is described on the sheet */
  stockText: string;
  /** unit word of the concentration ('particles' or 'mol') */
  per: 'particles' | 'mol';
  /** kg/mol, for the mass fraction of a chemical's working solution and sample (null or absent: not known) */
  molarMass?: number | null;
  /** the stock's mass fraction (null or absent: not known) */
  stockMassFraction?: number | null;
  /** the chemical's hazard bands as stored on the shelf; null or absent: no hazard data (nothing can be compared) */
  hazards?: HazardSet | null;
}

/** What a sample is: the no-dopant control, a dose of the series, the no-fuel control, the dopant-alone control. */
export type SampleKind = 'no-dopant' | 'series' | 'no-fuel' | 'dopant-alone';

export interface SampleSpec {
  name: string;
  role: 'series' | 'control';
  /** dopant dose (m⁻³) or null for a control without dopant */
  dose: number | null;
  /** target concentration of each component in the tube, per m³, by component id (a Map: any id is an ordinary key) */
  conc: ReadonlyMap<string, number>;
  /** whether the tube takes the master mix (base species) */
  usesMasterMix: boolean;
  /** what the sample is; when absent it is read from the role, the dose and which components it holds */
  kind?: SampleKind;
}

export interface PipettingOptions {
  sampleVolume: number;
  replicates: number;
  minVolume: number;
  overage: number;
  buffer: string;
  /** a stock below this volume per tube is first made into a working solution (default 5 µL, common practice) */
  workingBelow?: number;
}

/** A liquid the tubes or the steps draw from: the buffer, a stock, a working solution, a serial dilution, the master mix. */
export interface Liquid {
  key: string;
  /** short code printed on the sheet and on the vial (W1, S1, MM), null for the buffer and the stocks */
  code: string | null;
  kind: 'buffer' | 'stock' | 'working' | 'serial' | 'master-mix';
  label: string;
  /** concentration of each component in it, per m³, as made from the rounded volumes */
  contents: ReadonlyMap<string, number>;
}

/** One short step before the table: make a liquid from others. */
export interface Preparation {
  code: string;
  kind: 'working' | 'serial' | 'master-mix';
  /** what is made, e.g. "hydrogen peroxide working solution, 2 M" */
  label: string;
  /** the component a working solution or a serial dilution is of (null for the master mix) */
  component: string | null;
  /** the round (working) or 1:10ⁿ (serial) concentration aimed at, per m³; null for the master mix */
  nominal: number | null;
  /** volume made, m³ (the sum of the transfers) */
  volume: number;
  /** what goes in, in order: the source(s) first, the buffer last */
  transfers: { from: string; label: string; volume: number }[];
  /** concentration of each component, as made, per m³ */
  contents: ReadonlyMap<string, number>;
  /** for a working solution: why it is made */
  reason: string | null;
  /** for the master mix: tubes it is made for (plus the overage) and the volume each takes */
  tubes: number | null;
  perTube: number | null;
}

/** One row of the table: a sample, in `replicates` tubes with the lids code + a, b, c … */
export interface Tube {
  code: string;
  lids: string[];
  kind: SampleKind;
  role: SampleSpec['role'];
  name: string;
  replicates: number;
  /** the dopant dose planned and delivered (after rounding), m⁻³; null for no dopant */
  plannedDose: number | null;
  deliveredDose: number | null;
  /** volume from each column's liquid (aligned with BenchPlan.columns), m³; 0 = none */
  volumes: number[];
  /** concentration of each component in the tube, per m³: planned and delivered (after rounding) */
  planned: ReadonlyMap<string, number>;
  delivered: ReadonlyMap<string, number>;
}

/** A concentration handled at the bench, for the hazards section: a stock bottle, a working solution, the sample. */
export interface Handled {
  chemical: string;
  /** working: a liquid made of it before the tubes (its working solution W…, or a 1:10 dilution S… when none fits) */
  where: 'stock' | 'working' | 'sample';
  /** W1 … or S1 … for a liquid made before the tubes, null otherwise */
  code: string | null;
  /** mol m⁻³ (as made; the sample: the largest delivered concentration) */
  concentration: number;
  /** mass fraction (stock: as given; otherwise c M / ρ with water's density, dilute); null if the molar mass is not known */
  massFraction: number | null;
}

export interface BenchPlan {
  sampleVolume: number;
  replicates: number;
  minVolume: number;
  workingBelow: number;
  liquids: Liquid[];
  preparations: Preparation[];
  /** the working-dilution decision for each pipetted chemical */
  working: { chemical: string; decision: WorkingDecision; code: string | null }[];
  /** the table's volume columns in order of addition (the buffer first, the fuel last): a short header (a code, or a role such as "dopant stock") and the liquid's full name */
  columns: { key: string; short: string; label: string }[];
  tubes: Tube[];
  handled: Handled[];
  components: Component[];
  dopantId: string;
  baseIds: string[];
  /** every pipetted volume (the buffer top-ups included), for checks */
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

/**
 * What a sample is, when the caller does not say: no dopant → the no-dopant control; a series sample → a dose; a
 * control with dopant is the no-fuel control when it lacks the chemicals other samples have, the dopant-alone
 * control when it lacks the base species others have, and otherwise (nothing to tell them apart by) no-fuel when it
 * holds no pipetted chemical.
 */
function kindsOf(samples: SampleSpec[], baseIds: string[], dopantId: string, chemicalIds: string[]): SampleKind[] {
  const has = (s: SampleSpec, ids: string[]) => ids.some((id) => (s.conc.get(id) ?? 0) > 0);
  const anyChem = samples.some((s) => has(s, chemicalIds));
  const anyBase = samples.some((s) => has(s, baseIds));
  return samples.map((s) => {
    if (s.kind) return s.kind;
    if (!((s.conc.get(dopantId) ?? 0) > 0)) return 'no-dopant';
    if (s.role === 'series') return 'series';
    if (anyChem && !has(s, chemicalIds)) return 'no-fuel';
    if (anyBase && !has(s, baseIds)) return 'dopant-alone';
    return has(s, chemicalIds) ? 'dopant-alone' : 'no-fuel';
  });
}

/** Tube codes: C0 no dopant, D1 … Dn the doses (in the order given, low to high on a sheet), CF no fuel, CA dopant alone. */
function tubeCodes(kinds: SampleKind[]): string[] {
  let d = 0;
  const raw = kinds.map((k) => (k === 'no-dopant' ? 'C0' : k === 'no-fuel' ? 'CF' : k === 'dopant-alone' ? 'CA' : `D${++d}`));
  const seen = new Map<string, number>();
  return raw.map((c) => {
    const n = (seen.get(c) ?? 0) + 1;
    seen.set(c, n);
    return n === 1 ? c : `${c}.${n}`;
  });
}

const LETTERS = 'abcdefghijklmnopqrstuvwxyz';

interface Draw {
  component: string;
  /** liquid key */
  from: string;
  volume: number;
}

/** Stock key of a component; serial level k of it. */
const stockKey = (id: string) => `stock\u0000${id}`;
const serialKey = (id: string, k: number) => `serial\u0000${id}\u0000${k}`;
const workingKey = (id: string) => `working\u0000${id}`;
const MM = 'master-mix';
const BUFFER = 'buffer';

class Impossible extends Error {}

/**
 * Plan the pipetting of a set of samples: working solutions, serial dilutions,
 * master mix, and the table of tubes.
 * @throws DomainError('impossible-volumes') with what would fix it
 */
export function planBench(components: Component[], samples: SampleSpec[], o: PipettingOptions, baseIds: string[], dopantId: string, chemicalIds: string[]): BenchPlan {
  const comp = new Map(components.map((c) => [c.id, c]));
  const below = o.workingBelow ?? WORKING_BELOW;
  const V = o.sampleVolume;
  // aim for about a tenth of the sample volume of each working solution per tube, at least twice the rule's volume
  const aim = Math.max(2 * below, V / 10, o.minVolume);
  const decisions: BenchPlan['working'] = [];
  const working = new Map<string, number>();
  /** The rule for one chemical at the working concentration w (null: none possible). */
  const decide = (id: string, w: number | null) => {
    const c = comp.get(id)!;
    const cMax = Math.max(0, ...samples.map((s) => s.conc.get(id) ?? 0));
    const set = c.hazards ?? null;
    const wStock = c.stockMassFraction ?? null;
    const M = c.molarMass ?? null;
    const stockBand = set && wStock !== null ? classify(set, wStock) : null;
    const workBand = set && w !== null && M ? classify(set, (w * M) / WATER_DENSITY_25C) : null;
    return decideWorking((cMax * V) / c.stock, below, stockBand, workBand, w !== null);
  };
  for (const id of chemicalIds) {
    const c = comp.get(id)!;
    const cMax = Math.max(0, ...samples.map((s) => s.conc.get(id) ?? 0));
    if (!(cMax > 0)) continue;
    const w = workingConcentration(cMax, V, aim, c.stock);
    const decision = decide(id, w);
    decisions.push({ chemical: id, decision, code: null });
    if (decision.make && w !== null) working.set(id, w);
  }
  // a working solution takes more room in the tube than the stock did: if the tubes do not fit, make it stronger
  for (let attempt = 0; ; attempt++) {
    try {
      const plan = attemptPlan(comp, components, samples, o, baseIds, dopantId, chemicalIds, working);
      // the reason in the words of each working solution as made (the rounded volumes move it off the round value;
      // its mass fraction as made is what the hazards section bands); kept as judged if the rule reads otherwise there
      for (const d of decisions) {
        const made = plan.preparations.find((p) => p.kind === 'working' && p.component === d.chemical)?.contents.get(d.chemical);
        if (!d.decision.make || made === undefined) continue;
        const again = decide(d.chemical, made);
        if (again.make) d.decision = again;
      }
      plan.working = decisions.map((d) => ({ ...d, code: plan.preparations.find((p) => p.kind === 'working' && p.component === d.chemical)?.code ?? null }));
      plan.workingBelow = below;
      return plan;
    } catch (e) {
      if (!(e instanceof Impossible) || working.size === 0 || attempt > 12) {
        if (e instanceof Impossible) throw new DomainError('impossible-volumes', e.message);
        throw e;
      }
      let bumped = false;
      for (const [id, w] of working) {
        const up = nextUp125(w);
        if (up > comp.get(id)!.stock / 2) continue;
        // the stronger solution must still be worth making (its band may now be the stock's): the rule again, at up
        const d = decide(id, up);
        const entry = decisions.find((x) => x.chemical === id)!;
        if (d.make) {
          working.set(id, up);
          entry.decision = d;
        } else {
          working.delete(id);
          entry.decision = { ...d, reason: `${d.reason} (a working solution weak enough to be classified below the stock does not fit the tubes)` };
        }
        bumped = true;
      }
      if (!bumped) {
        // the stocks themselves: the last resort, and the message says what would fix it
        for (const id of [...working.keys()]) working.delete(id);
        for (const d of decisions) if (d.decision.make) d.decision = { ...d.decision, make: false, reason: `${d.decision.reason}; but with a working solution the tubes do not fit, so it is pipetted from the stock` };
      }
    }
  }
}

function attemptPlan(
  comp: Map<string, Component>,
  components: Component[],
  samples: SampleSpec[],
  o: PipettingOptions,
  baseIds: string[],
  dopantId: string,
  chemicalIds: string[],
  working: Map<string, number>,
): BenchPlan {
  const V = o.sampleVolume;
  const R = o.replicates;
  const ov = 1 + o.overage;
  const problems: string[] = [];
  const liquids = new Map<string, Liquid>();
  liquids.set(BUFFER, { key: BUFFER, code: null, kind: 'buffer', label: o.buffer, contents: new Map() });
  for (const c of components) liquids.set(stockKey(c.id), { key: stockKey(c.id), code: null, kind: 'stock', label: `${c.label} stock`, contents: new Map([[c.id, c.stock]]) });
  // Dilution level of a volume from the stock: the smallest k with V·10^k ≥ min.
  const levelOf = (v: number) => (v >= o.minVolume * (1 - 1e-9) || v === 0 ? 0 : Math.ceil(Math.log10(o.minVolume / v) - 1e-12));
  const atLeastMin = (v: number) => Math.max(roundToPipette(v), roundUpToPipette(o.minVolume));
  /** A draw of component `id` giving concentration c in volume `into`: from its working solution, or the stock or a serial level. */
  const draw = (id: string, c: number, into: number): Draw => {
    const w = working.get(id);
    if (w !== undefined) return { component: id, from: workingKey(id), volume: atLeastMin((c * into) / w) };
    const v0 = (c * into) / comp.get(id)!.stock;
    const k = levelOf(v0);
    return { component: id, from: k === 0 ? stockKey(id) : serialKey(id, k), volume: atLeastMin(v0 * Math.pow(10, k)) };
  };

  const kinds = kindsOf(samples, baseIds, dopantId, chemicalIds);
  const codes = tubeCodes(kinds);
  // Per tube: the dopant, the chemicals, and the base species of a tube without master mix.
  const perTube = samples.map((s) => {
    const draws: Draw[] = [];
    if (!s.usesMasterMix) for (const b of baseIds) if ((s.conc.get(b) ?? 0) > 0) draws.push(draw(b, s.conc.get(b)!, V));
    if ((s.conc.get(dopantId) ?? 0) > 0) draws.push(draw(dopantId, s.conc.get(dopantId)!, V));
    for (const f of chemicalIds) if ((s.conc.get(f) ?? 0) > 0) draws.push(draw(f, s.conc.get(f)!, V));
    return { s, draws };
  });

  // Master mix: the base species, identical in every tube that takes it; each such tube takes p of it.
  const mmTubes = perTube.filter((t) => t.s.usesMasterMix);
  const nMm = mmTubes.length * R;
  const baseTarget = new Map(baseIds.map((b) => [b, mmTubes[0]?.s.conc.get(b) ?? 0] as const));
  const variable = mmTubes.map((t) => t.draws.reduce((a, d) => a + d.volume, 0));
  const reserve = variable.length > 0 ? Math.max(...variable) + o.minVolume : 0;
  const p = roundDownToPipette(V - reserve);
  // the volume of each base's stock a tube's share of the master mix carries
  const baseInTube = [...baseTarget].reduce((a, [b, c]) => a + (c * V) / comp.get(b)!.stock, 0);
  let mmDraws: Draw[] = [];
  let mmNeed = 0;
  if (mmTubes.length > 0 && baseInTube > 0) {
    if (p < baseInTube || p < o.minVolume) {
      const need = baseInTube + reserve;
      // the fullest tube (the largest variable part) and its dopant draw
      const vi = variable.indexOf(Math.max(...variable));
      const top = mmTubes[vi]!;
      const topDopant = top.draws.find((d) => d.component === dopantId);
      const dop = comp.get(dopantId)!;
      const per = dop.per === 'mol' ? (x: number) => fmt(Number(x.toPrecision(3)), 'concentration') : (x: number) => `${formatNumber(Number((x * 1e-6).toPrecision(3)))} particles/mL`;
      // every draw is c V / stock, so a larger sample helps only with the fixed volumes (minimums, rounding): where the
      // stocks themselves, undiluted, would fill a tube (Σ c / stock ≥ 1), no sample volume fits it
      const undiluted = Math.max(...mmTubes.map((t) => [...t.s.conc].reduce((a, [id, c]) => a + (c > 0 && comp.has(id) ? c / comp.get(id)!.stock : 0), 0)));
      const fixes: string[] = undiluted < 1 ? [`a larger sample volume (at least ${fmtUl(roundUp(need * 1.05))})`] : [];
      const noVolume = undiluted < 1 ? '' : ` No sample volume helps: undiluted, the stocks alone would fill ${Math.round(undiluted * 100)} % of any tube.`;
      // a more concentrated dopant stock helps only when the fullest tube takes it from the stock itself: a draw from a
      // dilution is there because the stock volume is small, and a stronger stock would not shrink it
      if (topDopant && topDopant.from === stockKey(dopantId)) {
        const room = V - (need - topDopant.volume);
        const f = room > 0 ? topDopant.volume / room : Infinity;
        fixes.push(Number.isFinite(f) && f > 1 ? `a ${dop.label} stock of at least ${per(dop.stock * f * 1.05)} (now ${per(dop.stock)}, ${dop.stockText})` : `more concentrated base and fuel stocks (they alone take ${fmtUl(need - topDopant.volume)})`);
      } else fixes.push(`more concentrated base and fuel stocks (they take ${fmtUl(need - (topDopant?.volume ?? 0))})`);
      // volumes raised to a minimum set above the usual 1 µL take room of their own
      const raised = top.draws.filter((d) => d.volume <= roundUpToPipette(o.minVolume) * (1 + 1e-9));
      if (raised.length > 0 && o.minVolume > UL * (1 + 1e-9)) fixes.push(`a smaller minimum volume to pipette (now ${fmtUl(o.minVolume)}; ${raised.length} of that tube's volumes are raised to it)`);
      const drawText = top.draws.map((d) => `${fmtUl(d.volume)} of ${d.from === stockKey(d.component) ? `the ${comp.get(d.component)!.label} stock` : d.from.startsWith('working') ? `the ${comp.get(d.component)!.label} working solution` : `a ${comp.get(d.component)!.label} dilution`}`).join(', ');
      throw new Impossible(`the components need ${fmtUl(need)} in a ${fmtUl(V)} tube (the fullest tube, ${top.s.name}, takes ${drawText}, beside the base species' ${fmtUl(baseInTube)} and one minimum volume of buffer).${noVolume} Use ${fixes.join(', ')}, or fewer or lower doses.`);
    }
    mmNeed = p * nMm * ov;
    // each base into the master mix so that p of it carries the tube's share (C₁V₁ = C₂V₂ with the mix's own volume)
    mmDraws = [...baseTarget].filter(([, c]) => c > 0).map(([b, c]) => draw(b, (c * V) / p, mmNeed));
  }

  // Serial dilutions, deepest first: each level is made for what is drawn from it plus what the next level takes.
  const preparations: Preparation[] = [];
  const serialNeed = new Map<string, number>();
  const addNeed = (d: Draw, times: number) => {
    if (d.from.startsWith('serial\u0000')) serialNeed.set(d.from, (serialNeed.get(d.from) ?? 0) + d.volume * times);
  };
  for (const t of perTube) for (const d of t.draws) addNeed(d, R * ov);
  for (const d of mmDraws) addNeed(d, 1);
  const serialIds = [...new Set([...serialNeed.keys()].map((k) => k.split('\u0000')[1]!))];
  const serialPreps: Preparation[] = [];
  let sIndex = 0;
  for (const id of serialIds) {
    const c = comp.get(id)!;
    const maxLevel = Math.max(...[...serialNeed.keys()].filter((k) => k.split('\u0000')[1] === id).map((k) => Number(k.split('\u0000')[2])));
    let takeFromNext = 0;
    const made: { k: number; take: number; diluent: number }[] = [];
    for (let k = maxLevel; k >= 1; k--) {
      const { take, diluent } = tenfoldTake((serialNeed.get(serialKey(id, k)) ?? 0) + takeFromNext, o.minVolume);
      made.push({ k, take, diluent });
      takeFromNext = take;
    }
    for (const m of made.reverse()) {
      const code = `S${++sIndex}`;
      const from = m.k === 1 ? stockKey(id) : serialKey(id, m.k - 1);
      const conc = c.stock / Math.pow(10, m.k);
      const contents = new Map([[id, conc]]);
      liquids.set(serialKey(id, m.k), { key: serialKey(id, m.k), code, kind: 'serial', label: `${c.label} 1:${Math.pow(10, m.k)}`, contents });
      serialPreps.push({
        code,
        kind: 'serial',
        label: `${c.label} 1:${Math.pow(10, m.k)}`,
        component: id,
        nominal: conc,
        volume: m.take + m.diluent,
        transfers: [
          { from, label: liquids.get(from)!.label, volume: m.take },
          { from: BUFFER, label: o.buffer, volume: m.diluent },
        ],
        contents,
        reason: null,
        tubes: null,
        perTube: null,
      });
    }
  }

  // Working solutions: enough for every tube that takes it plus the overage, made from a settable stock volume.
  const workingPreps: Preparation[] = [];
  let wIndex = 0;
  for (const id of chemicalIds) {
    const w = working.get(id);
    if (w === undefined) continue;
    const c = comp.get(id)!;
    const need = perTube.reduce((a, t) => a + t.draws.filter((d) => d.from === workingKey(id)).reduce((x, d) => x + d.volume, 0), 0) * R * ov;
    if (!(need > 0)) continue;
    let stockVol = roundUpToPipette(Math.max((need * w) / c.stock, o.minVolume));
    let diluent = roundToPipette(stockVol * (c.stock / w - 1));
    for (let i = 0; i < 100 && stockVol + diluent < need; i++) {
      stockVol = roundUpToPipette(stockVol * (1 + 1e-6) + 1e-15);
      diluent = roundToPipette(stockVol * (c.stock / w - 1));
    }
    const total = stockVol + diluent;
    const code = `W${++wIndex}`;
    const contents = new Map([[id, (c.stock * stockVol) / total]]);
    liquids.set(workingKey(id), { key: workingKey(id), code, kind: 'working', label: `${c.label} ${fmtConc(w, 'mol')}`, contents });
    workingPreps.push({
      code,
      kind: 'working',
      label: `${c.label} working solution, ${fmtConc(w, 'mol')}`,
      component: id,
      nominal: w,
      volume: total,
      transfers: [
        { from: stockKey(id), label: liquids.get(stockKey(id))!.label, volume: stockVol },
        { from: BUFFER, label: o.buffer, volume: diluent },
      ],
      contents,
      reason: null,
      tubes: null,
      perTube: null,
    });
  }

  // The master mix as made: the bases as drawn, the buffer to the volume needed.
  if (mmDraws.length > 0) {
    const bases = mmDraws.reduce((a, d) => a + d.volume, 0);
    let buf = roundToPipette(mmNeed - bases);
    if (buf > 0 && buf < o.minVolume) buf = roundUpToPipette(o.minVolume);
    const total = bases + buf;
    const contents = new Map<string, number>();
    for (const d of mmDraws) contents.set(d.component, (contents.get(d.component) ?? 0) + (liquids.get(d.from)!.contents.get(d.component)! * d.volume) / total);
    liquids.set(MM, { key: MM, code: 'MM', kind: 'master-mix', label: 'master mix', contents });
    preparations.push(...workingPreps, ...serialPreps, {
      code: 'MM',
      kind: 'master-mix',
      label: `master mix for ${nMm} tubes plus ${Math.round(o.overage * 100)} %`,
      component: null,
      nominal: null,
      volume: total,
      transfers: [...(buf > 0 ? [{ from: BUFFER, label: o.buffer, volume: buf }] : []), ...mmDraws.map((d) => ({ from: d.from, label: liquids.get(d.from)!.label, volume: d.volume }))],
      contents,
      reason: null,
      tubes: nMm,
      perTube: p,
    });
  } else preparations.push(...workingPreps, ...serialPreps);

  // The table's columns in order of addition: buffer, master mix, base species, dopant, the chemicals (the fuel last).
  const used = new Set<string>();
  for (const t of perTube) for (const d of t.draws) used.add(d.from);
  const order: string[] = [BUFFER, ...(liquids.has(MM) ? [MM] : [])];
  const sourcesOf = (id: string) => [stockKey(id), ...[...liquids.keys()].filter((k) => k.startsWith(`serial\u0000${id}\u0000`)), workingKey(id)];
  for (const b of baseIds) order.push(...sourcesOf(b));
  order.push(...sourcesOf(dopantId));
  for (const f of chemicalIds) order.push(...sourcesOf(f));
  const columnKeys = order.filter((k, i) => (k === BUFFER || k === MM || used.has(k)) && order.indexOf(k) === i);

  const tubes: Tube[] = perTube.map((t, i) => {
    const s = t.s;
    const vols = new Map<string, number>();
    for (const d of t.draws) vols.set(d.from, (vols.get(d.from) ?? 0) + d.volume);
    if (s.usesMasterMix && liquids.has(MM)) vols.set(MM, p);
    const others = [...vols.values()].reduce((a, v) => a + v, 0);
    const buf = V - others;
    if (buf < -1e-15) problems.push(`${s.name}: the components need ${fmtUl(others)}, more than the ${fmtUl(V)} tube`);
    else if (buf > 1e-15 && buf < o.minVolume * (1 - 1e-9)) problems.push(`${s.name}: the buffer would be ${fmtUl(buf)}, below the ${fmtUl(o.minVolume)} minimum; change the sample volume slightly`);
    vols.set(BUFFER, buf > 1e-15 ? buf : 0);
    const delivered = new Map<string, number>();
    for (const [from, v] of vols) for (const [id, c] of liquids.get(from)!.contents) delivered.set(id, (delivered.get(id) ?? 0) + (c * v) / V);
    const code = codes[i]!;
    return {
      code,
      lids: R === 1 ? [code] : Array.from({ length: R }, (_, r) => `${code}${LETTERS[r]}`),
      kind: kinds[i]!,
      role: s.role,
      name: s.name,
      replicates: R,
      plannedDose: (s.conc.get(dopantId) ?? 0) > 0 ? s.conc.get(dopantId)! : s.dose === null ? null : 0,
      deliveredDose: (s.conc.get(dopantId) ?? 0) > 0 ? (delivered.get(dopantId) ?? 0) : s.dose === null ? null : 0,
      volumes: columnKeys.map((k) => vols.get(k) ?? 0),
      planned: s.conc,
      delivered,
    };
  });
  if (problems.length > 0) throw new Impossible(problems.join(' '));

  // Each column has a short header (a code or a role: the table must fit a page) and its full name for the caption.
  const baseNo = (id: string) => (baseIds.length === 1 ? 'base' : `base ${baseIds.indexOf(id) + 1}`);
  const columns = columnKeys.map((k) => {
    const l = liquids.get(k)!;
    const id = [...l.contents.keys()][0];
    const role = id === dopantId ? 'dopant' : id !== undefined && baseIds.includes(id) ? baseNo(id) : null;
    const short = l.kind === 'buffer' ? l.label : l.code ?? (role ? `${role} stock` : l.label);
    return { key: k, short, label: l.label };
  });

  // Concentrations handled, per chemical: stock bottle, working solution, sample.
  const handled: Handled[] = [];
  for (const id of chemicalIds) {
    const c = comp.get(id)!;
    const inTubes = tubes.map((t) => t.delivered.get(id) ?? 0).filter((x) => x > 0);
    if (inTubes.length === 0) continue;
    const M = c.molarMass ?? null;
    const w = (x: number) => (M ? (x * M) / WATER_DENSITY_25C : null);
    handled.push({ chemical: id, where: 'stock', code: null, concentration: c.stock, massFraction: c.stockMassFraction ?? null });
    // every liquid made of it before the tubes: its working solution, or 1:10 dilutions when none fits (code S…)
    for (const p of preparations) {
      if (p.component !== id) continue;
      const x = p.contents.get(id)!;
      handled.push({ chemical: id, where: 'working', code: p.code, concentration: x, massFraction: w(x) });
    }
    const top = Math.max(...inTubes);
    handled.push({ chemical: id, where: 'sample', code: null, concentration: top, massFraction: w(top) });
  }

  const allVolumes = [...preparations.flatMap((x) => x.transfers.map((t) => t.volume)), ...tubes.flatMap((t) => t.volumes.filter((v) => v > 0))];
  return {
    sampleVolume: V,
    replicates: R,
    minVolume: o.minVolume,
    workingBelow: o.workingBelow ?? WORKING_BELOW,
    liquids: [...liquids.values()],
    preparations,
    working: [],
    columns,
    tubes,
    handled,
    components,
    dopantId,
    baseIds,
    allVolumes,
  };
}

// ---------------------------------------------------------------- text

/** Superscript digits for a power of ten (10⁸). */
const sup = (n: number) => String(n).split('').map((c) => '⁻⁰¹²³⁴⁵⁶⁷⁸⁹'['-0123456789'.indexOf(c)] ?? c).join('');
const num = formatNumber;

/** A concentration: per mL for particles; mM below 1 M, M above, for chemicals (four significant figures). */
export function fmtConc(x: number, per: 'particles' | 'mol'): string {
  if (per === 'particles') return `${num(x * 1e-6)} /mL`;
  return x >= 1000 ? `${num(x / 1000)} M` : `${num(x)} mM`;
}

const pct = (w: number) => `${Number((w * 100).toPrecision(3))} % w/w`;

/** An amount for the JSON model. */
export interface Amount {
  value: number;
  unit: string;
}
const ulAmount = (v: number): Amount => ({ value: Number((v / UL).toFixed(1)), unit: 'µL' });
const concAmount = (x: number, per: 'particles' | 'mol'): Amount => (per === 'particles' ? { value: Number((x * 1e-6).toPrecision(4)), unit: 'particles/mL' } : { value: Number(x.toPrecision(4)), unit: 'mM' });

/** The tube list for the rest of the sheet (expected outcomes, observations): code, role, planned and delivered dose. */
export function tubeList(plan: BenchPlan) {
  return plan.tubes.map((t) => ({
    code: t.code,
    lids: t.lids,
    kind: t.kind,
    role: t.role,
    name: t.name,
    replicates: t.replicates,
    /** SI (m⁻³) and per mL; null: no dopant in the tube */
    plannedDose: t.plannedDose === null ? null : { si: t.plannedDose, perMl: t.plannedDose * 1e-6 },
    deliveredDose: t.deliveredDose === null ? null : { si: t.deliveredDose, perMl: t.deliveredDose * 1e-6 },
  }));
}
export type TubeListEntry = ReturnType<typeof tubeList>[number];

/** The structured pipetting data for the JSON rendering (numbers with units; volumes as set on the pipette). */
export function pipettingJson(plan: BenchPlan) {
  const comp = new Map(plan.components.map((c) => [c.id, c]));
  const liquid = new Map(plan.liquids.map((l) => [l.key, l]));
  const wOf = (id: string, x: number) => {
    const c = comp.get(id)!;
    return c.per === 'mol' && c.molarMass ? (x * c.molarMass) / WATER_DENSITY_25C : null;
  };
  const contents = (m: ReadonlyMap<string, number>) => [...m].map(([id, x]) => ({ component: id, concentration: concAmount(x, comp.get(id)!.per), massFraction: wOf(id, x) }));
  return {
    rule: ROUNDING_RULE,
    sampleVolume: ulAmount(plan.sampleVolume),
    replicates: plan.replicates,
    minVolume: ulAmount(plan.minVolume),
    workingBelow: ulAmount(plan.workingBelow),
    dopant: plan.dopantId,
    base: plan.baseIds,
    components: plan.components.map((c) => ({ id: c.id, label: c.label, per: c.per })),
    working: plan.working.map((w) => ({ chemical: w.chemical, made: w.decision.make, code: w.code, stockPerTube: ulAmount(w.decision.stockPerTube), volumeRule: w.decision.volumeRule, bandRule: w.decision.bandRule, reason: w.decision.reason })),
    preparations: plan.preparations.map((p) => ({
      code: p.code,
      kind: p.kind,
      label: p.label,
      component: p.component,
      nominal: p.nominal === null || p.component === null ? null : concAmount(p.nominal, comp.get(p.component)!.per),
      volume: ulAmount(p.volume),
      /** base: the base species a master-mix transfer carries (null otherwise) */
      transfers: p.transfers.map((t) => ({ from: t.label, buffer: t.from === BUFFER, base: p.kind === 'master-mix' ? ([...(liquid.get(t.from)?.contents.keys() ?? [])][0] ?? null) : null, volume: ulAmount(t.volume) })),
      contents: contents(p.contents),
      tubes: p.tubes,
      perTube: p.perTube === null ? null : ulAmount(p.perTube),
    })),
    /** the table's volume columns in order of addition: short header and full name */
    columns: plan.columns.map((c) => ({ short: c.short, label: c.label })),
    tubes: plan.tubes.map((t) => ({
      code: t.code,
      lids: t.lids,
      kind: t.kind,
      role: t.role,
      name: t.name,
      replicates: t.replicates,
      plannedDose: t.plannedDose === null ? null : concAmount(t.plannedDose, 'particles'),
      deliveredDose: t.deliveredDose === null ? null : concAmount(t.deliveredDose, 'particles'),
      /** aligned with columns; null: nothing from that liquid */
      volumes: t.volumes.map((v) => (v > 0 ? ulAmount(v) : null)),
      concentrations: [...new Set([...t.planned.keys(), ...t.delivered.keys()])]
        .filter((id) => (t.planned.get(id) ?? 0) > 0 || (t.delivered.get(id) ?? 0) > 0)
        .map((id) => ({ component: id, planned: concAmount(t.planned.get(id) ?? 0, comp.get(id)!.per), delivered: concAmount(t.delivered.get(id) ?? 0, comp.get(id)!.per) })),
    })),
    handled: plan.handled.map((h) => ({ chemical: h.chemical, where: h.where, code: h.code, concentration: concAmount(h.concentration, 'mol'), massFraction: h.massFraction })),
  };
}
export type PipettingJson = ReturnType<typeof pipettingJson>;

const KIND_TEXT: Record<SampleKind, string> = { 'no-dopant': 'no dopant', series: 'dose', 'no-fuel': 'no fuel', 'dopant-alone': 'dopant alone' };

/** An Amount of the JSON as printed: µL to 0.1 µL (mL from 10 mL), per mL, mM below 1 M and M above. */
const vText = (a: Amount) => (a.value >= 10000 ? `${Number((a.value / 1000).toFixed(2))} mL` : `${a.value} µL`);
const cTextOf = (a: Amount) => (a.unit === 'particles/mL' ? `${num(a.value)} /mL` : a.unit === 'mM' ? (a.value >= 1000 ? `${num(a.value / 1000)} M` : `${num(a.value)} mM`) : `${num(a.value)} ${a.unit}`);

/** A number of molecules per mL as a molar concentration (nM, µM …; four figures). */
const nM = (a: Amount) => fmtMolar(a.value * 1e6, 4);

/**
 * The pipetting part of the sheet as one section (id "pipetting"), from the JSON
 * model alone (so every rendering shows what the JSON holds): the rule, the
 * steps before the table, the table (one row per sample, its tubes' lid codes,
 * planned and delivered dose, the volumes in order of addition, a check box for
 * "mixed, clock started"), and what every tube holds.
 * `doseLabel(t)` labels a dose row (e.g. "0.5 ×"); by default the sample's name.
 */
export function pipettingSections(p: PipettingJson, options: { doseLabel?: (t: PipettingJson['tubes'][number]) => string; amountOf?: (species: string) => AmountContext } = {}): Section[] {
  const comp = new Map(p.components.map((c) => [c.id, c]));
  // an enzyme's amount in nM, with its particles/mL beside it (the unit the volumes are worked out in)
  const isEnzyme = (id: string) => options.amountOf?.(id).kind === 'enzyme';
  const cText = (a: Amount, id: string) => (a.unit === 'particles/mL' && isEnzyme(id) ? `${nM(a)} (${cTextOf(a)})` : cTextOf(a));
  const label = (id: string) => comp.get(id)?.label ?? id;
  const blocks: Block[] = [];
  const R = p.replicates;
  blocks.push({ kind: 'paragraph', text: `Tubes of ${vText(p.sampleVolume)}, ${R} replicate${R === 1 ? '' : 's'} per row. ${p.rule}` });

  if (p.preparations.length > 0) {
    blocks.push({ kind: 'heading', text: 'Before the tubes: working solutions, dilutions, master mix' });
    const prepCols: Column[] = [
      { id: 'done', label: 'done', check: true },
      { id: 'code', label: 'code' },
      { id: 'make', label: 'make' },
      { id: 'from', label: 'from' },
      { id: 'into', label: 'into', numeric: true },
      { id: 'handled', label: 'concentration handled' },
    ];
    const rows: Row[] = p.preparations.map((x) => {
      const into = x.transfers.filter((t) => t.buffer);
      const from = x.transfers.filter((t) => !t.buffer);
      // in the master mix the base species go by their role (named once in the make cell), so the row stays short
      const role = (id: string) => (p.base.length === 1 ? 'base' : `base ${p.base.indexOf(id) + 1}`);
      const handled = x.contents.map((c) => `${x.kind === 'master-mix' && p.base.length > 1 ? `${role(c.component)} ` : ''}${cText(c.concentration, c.component)}${c.massFraction !== null ? ` (${pct(c.massFraction)})` : ''}`);
      const make = `${vText(x.volume)} ${x.kind === 'master-mix' ? `${x.label}${x.perTube !== null ? `, ${vText(x.perTube)} per tube` : ''} (${x.contents.map((c) => `${p.base.length > 1 ? `${role(c.component)}: ` : 'base: '}${label(c.component)}`).join('; ')})` : x.label}`;
      const fromText = (t: (typeof x.transfers)[number]) => (x.kind === 'master-mix' && t.base !== null ? `${vText(t.volume)} ${role(t.base)} ${t.from.endsWith(' stock') ? 'stock' : t.from.slice(label(t.base).length + 1)}` : `${vText(t.volume)} ${t.from}`);
      return { cells: [null, x.code, make, from.map(fromText).join(' + '), into.length ? `${vText(into[0]!.volume)} ${into[0]!.from}` : '—', handled.join('; ')] };
    });
    blocks.push(table(prepCols, rows));
  }
  const reasons = p.working.map((w) => `${label(w.chemical)}: ${w.reason}${w.code ? ` (${w.code})` : ''}.`);
  if (reasons.length) blocks.push({ kind: 'list', items: reasons });

  const fuelLast = p.columns.length > 1 && p.working.length > 0;
  blocks.push({ kind: 'heading', text: `Tubes: add in the order of the columns (${p.columns.map((c) => c.short).join(', ')}${fuelLast ? ' last' : ''}), then mix gently and start the clock` });
  // doses in one unit of 10ⁿ per mL (the largest dose's decade), so the cells are short: 0.7854, 1.594 …
  const topDose = Math.max(0, ...p.tubes.map((t) => Math.max(t.plannedDose?.value ?? 0, t.deliveredDose?.value ?? 0)));
  const decade = topDose > 0 ? Math.floor(Math.log10(topDose)) : 0;
  const scaleText = decade === 0 ? 'per mL' : `10${sup(decade)} /mL`;
  // an enzyme dopant: its doses in nM (its stock, above, in nM too), the particles/mL in the caption's unit beside them
  const enzymeDopant = isEnzyme(p.dopant);
  const perDecade = (a: Amount) => String(Number((a.value / Math.pow(10, decade)).toPrecision(4)));
  const doseText = (a: Amount) => (enzymeDopant ? `${nM(a)} (${perDecade(a)})` : perDecade(a));
  const cols: Column[] = [
    { id: 'tube', label: 'tubes' },
    { id: 'sample', label: 'sample' },
    { id: 'planned', label: 'planned', numeric: true },
    { id: 'delivered', label: 'delivered', numeric: true },
    ...p.columns.map((c, i) => ({ id: `v${i}`, label: c.short, numeric: true })),
    { id: 'start', label: 'started', check: true },
  ];
  const rows: Row[] = p.tubes.map((t) => ({
    code: t.code,
    cells: [
      // a no-break space: "D3 a–c" stays on one line
      // a no-break space and a word joiner: "D3 a–c" stays on one line
      R === 1 ? t.code : `${t.code}\u00a0${t.lids[0]!.slice(t.code.length)}–\u2060${t.lids.at(-1)!.slice(t.code.length)}`,
      t.kind === 'series' ? (options.doseLabel?.(t) ?? t.name) : KIND_TEXT[t.kind],
      t.plannedDose === null ? '—' : doseText(t.plannedDose),
      t.deliveredDose === null ? '—' : doseText(t.deliveredDose),
      ...t.volumes.map((v) => (v ? vText(v) : '—')),
      null,
    ],
  }));
  // the dopant is named once (its stock column needs no second line); every other short header is spelled out
  const legend = p.columns.filter((c) => c.short !== c.label && c.short !== 'dopant stock').map((c) => `${c.short}: ${c.label}`);
  blocks.push(table(cols, rows, [`dopant: ${label(p.dopant)}, dose planned and delivered in ${enzymeDopant ? `nM (in brackets: ${scaleText})` : scaleText} of sample`, ...legend].join('; ')));

  // What every tube holds besides the dopant: planned and delivered (the same in every tube that takes it, or a range).
  const held: string[] = [];
  for (const c of p.components) {
    if (c.id === p.dopant) continue;
    const pairs = p.tubes.flatMap((t) => t.concentrations.filter((x) => x.component === c.id && x.planned.value > 0));
    if (pairs.length === 0) continue;
    const range = (xs: Amount[]) => {
      const texts = [...new Set(xs.map((x) => cText(x, c.id)))];
      const lo = xs.reduce((a, b) => (b.value < a.value ? b : a));
      const hi = xs.reduce((a, b) => (b.value > a.value ? b : a));
      return texts.length === 1 ? texts[0]! : `${cText(lo, c.id)} – ${cText(hi, c.id)}`;
    };
    const who = p.base.includes(c.id) ? (p.base.length === 1 ? 'base' : `base ${p.base.indexOf(c.id) + 1}`) : c.label;
    held.push(`${who} ${range(pairs.map((x) => x.planned))} planned, ${range(pairs.map((x) => x.delivered))} delivered (${pairs.length} sample${pairs.length === 1 ? '' : 's'})`);
  }
  if (held.length) blocks.push({ kind: 'paragraph', text: `In the tubes besides the dopant: ${held.join('; ')}.` });
  const nDoses = p.tubes.filter((t) => t.kind === 'series').length;
  const present = new Set(p.tubes.map((t) => t.kind));
  const lid = [
    ...(present.has('no-dopant') ? ['C0 no dopant'] : []),
    ...(nDoses > 0 ? [`${nDoses === 1 ? 'D1 the dose' : `D1…D${nDoses} the doses, low to high`}`] : []),
    ...(present.has('no-fuel') ? ['CF no fuel'] : []),
    ...(present.has('dopant-alone') ? ['CA dopant alone'] : []),
  ];
  blocks.push({ kind: 'paragraph', muted: true, text: `Tube codes, for the lids: ${lid.join('; ')}${R > 1 ? `; the letter (a–${LETTERS[R - 1]}) is the replicate` : ''}.` });
  return [{ id: 'pipetting', title: 'Pipetting', blocks }];
}

/** A legacy transfer step (what, from, volume). */
export interface Transfer {
  what: string;
  from: string;
  volume: number;
}

/** The plan as separate step lists (dilutions, master mix, per-sample steps), for a sheet that lists steps per sample. */
export interface PipettingPlan {
  dilutions: { name: string; component: string; factor: number; concentration: number; volume: number; steps: Transfer[] }[];
  masterMix: { tubes: number; perTube: number; total: number; steps: Transfer[] } | null;
  samples: { name: string; role: SampleSpec['role']; dose: number | null; tubes: number; steps: Transfer[] }[];
  allVolumes: number[];
  /** the compact plan these steps come from */
  bench: BenchPlan;
}

/**
 * planBench's plan as step lists: working solutions and serial dilutions as
 * `dilutions`, the master mix, and each sample's transfers in order of addition.
 * @throws DomainError('impossible-volumes') with what would fix it
 */
export function planPipetting(components: Component[], samples: SampleSpec[], o: PipettingOptions, baseIds: string[], dopantId: string, fuelIds: string[]): PipettingPlan {
  const bench = planBench(components, samples, o, baseIds, dopantId, fuelIds);
  const liquid = new Map(bench.liquids.map((l) => [l.key, l]));
  const what = (key: string) => {
    const l = liquid.get(key)!;
    if (l.kind === 'buffer') return l.label;
    if (l.kind === 'master-mix') return 'master mix';
    const id = [...l.contents.keys()][0]!;
    return components.find((c) => c.id === id)!.label;
  };
  const mm = bench.preparations.find((p) => p.kind === 'master-mix');
  return {
    dilutions: bench.preparations
      .filter((p) => p.kind !== 'master-mix')
      .map((p) => {
        const c = components.find((x) => x.id === p.component)!;
        const conc = p.contents.get(c.id)!;
        return { name: `${p.code}: ${p.label}`, component: c.id, factor: c.stock / conc, concentration: conc, volume: p.volume, steps: p.transfers.map((t) => ({ what: t.from === BUFFER ? o.buffer : c.label, from: t.label, volume: t.volume })) };
      }),
    masterMix: mm ? { tubes: mm.tubes!, perTube: mm.perTube!, total: mm.volume, steps: mm.transfers.map((t) => ({ what: t.from === BUFFER ? o.buffer : what(t.from), from: t.label, volume: t.volume })) } : null,
    samples: bench.tubes.map((t) => ({
      name: `${t.code}: ${t.name}`,
      role: t.role,
      dose: t.plannedDose,
      tubes: t.replicates,
      steps: bench.columns.flatMap((c, i) => (t.volumes[i]! > 0 ? [{ what: what(c.key), from: liquid.get(c.key)!.label, volume: t.volumes[i]! }] : [])),
    })),
    allVolumes: bench.allVolumes,
    bench,
  };
}
