/**
 * Rendering a bench sheet: HTML for print (A4 or Letter, `@media print`, table
 * headers repeated on every page, a checkbox per step, blank fields for the
 * operator and the date) and Markdown. All text from users or the shelf is
 * escaped.
 */
import { PICTOGRAMS } from './hazards.js';
import type { Amount, Sheet } from './sheet.js';

/** Escape for HTML text and attribute values. */
export function escapeHtml(x: unknown): string {
  return String(x).replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!);
}

/** Escape for Markdown: HTML-significant characters as entities, Markdown syntax with backslashes. */
export function escapeMarkdown(x: unknown): string {
  return String(x)
    .replace(/[&<>]/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;' })[c]!)
    .replace(/([\\`*_[\]|~])/g, '\\$1')
    .replace(/\r?\n/g, ' ');
}

const SUP: Record<string, string> = { '-': '⁻', '0': '⁰', '1': '¹', '2': '²', '3': '³', '4': '⁴', '5': '⁵', '6': '⁶', '7': '⁷', '8': '⁸', '9': '⁹' };

/** 1.433 × 10⁸ for large or small numbers, plain otherwise. */
export function formatNumber(v: number): string {
  if (v === 0 || (Math.abs(v) >= 1e-3 && Math.abs(v) < 1e5)) return String(Number(v.toPrecision(4)));
  const [m, e] = v.toExponential(3).split('e') as [string, string];
  return `${Number(m)} × 10${String(Number(e)).split('').map((c) => SUP[c] ?? c).join('')}`;
}

/** What a concentration of a chemical without hazard data on the shelf says: not classified, never "no hazard". */
export const NOT_CLASSIFIED = 'no hazard data on the shelf: not classified — check the supplier’s safety data sheet';

const amt = (a: Amount | null | undefined) => (a ? `${formatNumber(a.value)} ${a.unit}` : '—');
/** A band quantile: null means it lies above the dose cap (engine/planner.ts), not that it is unknown. */
const q = (a: Amount | null | undefined) => (a ? amt(a) : 'above the dose cap');
const bandExtra = (b: NonNullable<Sheet['prediction']['band']>) =>
  b.alreadyPast !== null && b.feasibleFraction !== null
    ? `; already past without dopant in ${(100 * b.alreadyPast).toFixed(1)} % of draws; crosses at or below the cap in ${(100 * b.feasibleFraction).toFixed(1)} %`
    : '';

export function renderHtml(sh: Sheet, paper: 'A4' | 'Letter' = 'A4'): string {
  const e = escapeHtml;
  const box = '<span class="box" aria-hidden="true">☐</span>';
  const stepsTable = (rows: { what: string; from: string; volume: Amount | null }[], caption?: string) => `
<table class="steps">${caption ? `<caption>${e(caption)}</caption>` : ''}
<thead><tr><th class="chk">done</th><th>#</th><th>add</th><th>from</th><th class="num">volume</th></tr></thead>
<tbody>${rows.map((r, i) => `<tr><td class="chk">${box}</td><td>${i + 1}</td><td>${e(r.what)}</td><td>${e(r.from)}</td><td class="num">${e(amt(r.volume))}</td></tr>`).join('')}</tbody></table>`;
  const haz = sh.hazards
    .map(
      (h) => `
<section class="hazard"><h3>${e(h.name)}</h3>
${h.asHandled
  .map(
    (a) => `<div class="handled"><h4>${e(a.where)}</h4>
${a.classified === false ? `<p class="unclassified"><strong>${e(NOT_CLASSIFIED)}</strong></p>` : a.classification.statements.length === 0 ? '<p>No hazard statement applies at this concentration under the shelf’s bands; handle with the general cautions below.</p>' : ''}
${a.classification.signal ? `<p class="signal">Signal word: <strong>${e(a.classification.signal)}</strong></p>` : ''}
${a.classification.pictograms.length ? `<p>Pictograms: ${a.classification.pictograms.map((p) => `${e(p)} (${e(PICTOGRAMS[p] ?? '')})`).join(', ')}</p>` : ''}
${a.classification.statements.length ? `<ul>${a.classification.statements.map((s) => `<li><strong>${e(s.code)}</strong> ${e(s.text)} <span class="muted">(${e(s.hazardClass)})</span></li>`).join('')}</ul>` : ''}
${a.classification.precautionary.length ? `<p class="muted">Precautionary: ${a.classification.precautionary.map(e).join(' ')}</p>` : ''}
</div>`,
  )
  .join('')}
${h.incompatibilities ? `<p><strong>Incompatible with:</strong> ${e(h.incompatibilities)}</p>` : ''}
${h.handling ? `<p><strong>Handling:</strong> ${e(h.handling)}</p>` : ''}
${h.storage ? `<p><strong>Storage:</strong> ${e(h.storage)}</p>` : ''}
${h.disposal ? `<p><strong>Disposal:</strong> ${e(h.disposal)}</p>` : ''}
<p class="muted">${e(h.verify)}${h.source ? ` Source of these data, as stored on the shelf: ${e(h.source)}` : ''}</p></section>`,
    )
    .join('');
  const p = sh.prediction;
  return `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><title>${e(sh.title)}</title>
<style>
  @page { size: ${paper === 'A4' ? 'A4' : 'letter'}; margin: 14mm 12mm; }
  body { font: 10.5pt/1.35 system-ui, sans-serif; color: #111; max-width: 190mm; margin: 0 auto; padding: 8mm; }
  h1 { font-size: 16pt; margin: 0 0 2mm; } h2 { font-size: 12.5pt; border-bottom: 1.5px solid #2f6f5e; margin-top: 6mm; } h3 { font-size: 11pt; margin: 3mm 0 1mm; } h4 { font-size: 10pt; margin: 2mm 0 1mm; }
  table { border-collapse: collapse; width: 100%; margin: 2mm 0 4mm; }
  th, td { border: 0.6px solid #999; padding: 1.2mm 1.8mm; text-align: left; vertical-align: top; }
  th { background: #eef2ee; } td.num, th.num { text-align: right; white-space: nowrap; } .chk { width: 9mm; text-align: center; }
  caption { text-align: left; font-weight: 600; padding: 1mm 0; }
  .box { font-size: 12pt; } .muted { color: #555; font-size: 9pt; } .signal strong { text-transform: uppercase; }
  .fields td { height: 8mm; width: 34%; } .warn { border-left: 3px solid #b5651d; padding-left: 2mm; }
  .hazard { border: 1px solid #b33; padding: 1mm 3mm; margin: 3mm 0; page-break-inside: avoid; }
  @media print {
    body { padding: 0; max-width: none; }
    thead { display: table-header-group; } tr { page-break-inside: avoid; }
    h2 { page-break-after: avoid; } a { color: inherit; text-decoration: none; }
  }
</style></head><body>
<h1>${e(sh.title)}</h1>
<p class="muted">brink ${e(sh.software.version)} · plan ${e(sh.plan.id)} (${e(sh.plan.boundary)}, ${e(sh.plan.dosing)}; computed ${e(sh.plan.createdAt)}) · candidate ${e(sh.candidate.name)} (${e(sh.candidate.id)}) · printed ${e(sh.printedAt)}</p>
<table class="fields"><tbody><tr><th>Operator</th><td></td><th>Date</th><td></td></tr><tr><th>Batch / lot numbers</th><td colspan="3"></td></tr></tbody></table>

<h2>Prediction</h2>
<table><thead><tr><th>quantity</th><th class="num">value</th></tr></thead><tbody>
<tr><td>threshold dose of ${e(sh.candidate.id)}</td><td class="num">${p.threshold.anyDose ? 'any dose above 0 (threshold 0⁺)' : `${e(amt(p.threshold))} (volume fraction ${e(p.threshold.volumeFraction.toPrecision(3))})`}</td></tr>
${p.band ? `<tr><td>uncertainty band (${e(p.band.samples)} Monte Carlo draws, seed ${e(p.band.seed)}${e(bandExtra(p.band))}): 5 % · median · 95 %</td><td class="num">${e(q(p.band.p05))} · ${e(q(p.band.median))} · ${e(q(p.band.p95))}</td></tr>` : ''}
<tr><td>reference dose (1 ×)</td><td class="num">${e(amt(p.referenceDose))}</td></tr>
${p.series ? `<tr><td>dose series</td><td>${e(p.series.note)}</td></tr>` : ''}
${p.atMargin ? `<tr><td>above the threshold: state, growth time, wavelength${p.atMargin.oscillationPeriod ? ', period' : ''}</td><td class="num">${e(p.atMargin.state)}, ${e(amt(p.atMargin.growthTime))}, ${e(amt(p.atMargin.wavelength))}${p.atMargin.oscillationPeriod ? `, ${e(amt(p.atMargin.oscillationPeriod))}` : ''}</td></tr>
<tr><td>gather together · pushed out</td><td class="num">${e(p.atMargin.gathers.join(', ') || '—')} · ${e(p.atMargin.pushedOut.join(', ') || '—')}</td></tr>` : ''}
</tbody></table>

<h2>Stocks</h2>
<table><thead><tr><th>substance</th><th>stock</th><th class="num">concentration</th><th>from</th></tr></thead><tbody>
${sh.stocks.map((s) => `<tr><td>${e(s.name)}</td><td>${e(s.described)}</td><td class="num">${e(amt(s.concentration))}</td><td>${e(s.source)}</td></tr>`).join('')}
</tbody></table>
<p class="muted">Sample volume ${e(amt(sh.options.sampleVolume))}, ${e(sh.options.replicates)} replicate tube(s) per sample, smallest volume pipetted ${e(amt(sh.options.minVolume))}, master-mix overage ${e(Math.round(sh.options.overage * 100))} %, diluent: ${e(sh.options.buffer)}.</p>

${sh.dilutions.length ? `<h2>Intermediate dilutions</h2>${sh.dilutions.map((d) => stepsTable(d.steps, `${d.name}: make ${amt(d.volume)} at ${amt(d.concentration)}`)).join('')}` : ''}
${sh.masterMix ? `<h2>Master mix</h2>${stepsTable(sh.masterMix.steps, `for ${sh.masterMix.tubes} tubes plus overage: ${amt(sh.masterMix.total)} in all, ${amt(sh.masterMix.perTube)} per tube; mix gently`)}` : ''}

<h2>Samples, in order of addition (fuel last, then mix and start the clock)</h2>
${sh.samples.map((s) => stepsTable([...s.steps, { what: 'mix gently and start the clock', from: '', volume: null }], `${s.name}${s.dose ? ` — dopant ${amt(s.dose)}` : ''} · ${s.tubes} tube(s)`)).join('')}

<h2>Imaging plan</h2>
<table><thead><tr><th>setting</th><th class="num">value</th></tr></thead><tbody>
<tr><td>frame interval</td><td class="num">${e(amt(sh.imaging.frameInterval))}</td></tr>
<tr><td>duration</td><td class="num">${e(amt(sh.imaging.duration))}</td></tr>
<tr><td>fuel lasts about</td><td class="num">${e(amt(sh.imaging.fuelLife))}</td></tr>
<tr><td>gas passes its solubility after</td><td class="num">${sh.imaging.gasSaturation ? `${e(sh.imaging.gasSaturation.chemical)}: ${e(amt(sh.imaging.gasSaturation.time))}` : e(amt(null))}</td></tr>
<tr><td>expected wavelength · chamber length</td><td class="num">${e(amt(sh.imaging.wavelength))} · ${e(amt(sh.imaging.chamberLength))}</td></tr>
<tr><td>suggested field of view</td><td class="num">${e(amt(sh.imaging.fieldOfView))}</td></tr>
</tbody></table>
<ul>${sh.imaging.notes.map((n) => `<li>${e(n)}</li>`).join('')}</ul>

${sh.warnings.length ? `<h2>Practical warnings</h2>${sh.warnings.map((w) => `<p class="warn"><strong>${e(w.code)}</strong>: ${e(w.message)}</p>`).join('')}` : ''}

<h2>Hazards and safe handling</h2>
${haz}
<ul>${sh.safety.map((x) => `<li>${e(x)}</li>`).join('')}</ul>

<h2>Traceability</h2>
<table><thead><tr><th>role</th><th>shelf item</th><th class="num">revision</th><th class="num">revision id</th></tr></thead><tbody>
${sh.shelfRevisions.map((r) => `<tr><td>${e(r.role)}</td><td>${e(r.id)}</td><td class="num">${e(r.revision)}</td><td class="num">${e(r.revisionId)}</td></tr>`).join('')}
</tbody></table>
</body></html>
`;
}

export function renderMarkdown(sh: Sheet): string {
  const m = escapeMarkdown;
  const table = (head: string[], rows: string[][]) => [`| ${head.join(' | ')} |`, `| ${head.map(() => '---').join(' | ')} |`, ...rows.map((r) => `| ${r.join(' | ')} |`)].join('\n');
  const steps = (rows: { what: string; from: string; volume: Amount }[]) => table(['done', '#', 'add', 'from', 'volume'], rows.map((r, i) => ['[ ]', String(i + 1), m(r.what), m(r.from), m(amt(r.volume))]));
  const p = sh.prediction;
  const out: string[] = [];
  out.push(`# ${m(sh.title)}`, '', `brink ${m(sh.software.version)} · plan ${sh.plan.id} (${m(sh.plan.boundary)}, ${m(sh.plan.dosing)}) · candidate ${m(sh.candidate.name)} (${m(sh.candidate.id)}) · printed ${m(sh.printedAt)}`, '', 'Operator: ______________________  Date: ______________', '');
  out.push('## Prediction', '', table(['quantity', 'value'], [
    [`threshold dose of ${m(sh.candidate.id)}`, p.threshold.anyDose ? 'any dose above 0 (threshold 0⁺)' : `${m(amt(p.threshold))} (volume fraction ${p.threshold.volumeFraction.toPrecision(3)})`],
    ...(p.band ? [[`band (${p.band.samples} draws, seed ${p.band.seed}${bandExtra(p.band)}): 5 % · median · 95 %`, `${m(q(p.band.p05))} · ${m(q(p.band.median))} · ${m(q(p.band.p95))}`]] : []),
    ['reference dose (1 ×)', m(amt(p.referenceDose))],
    ...(p.series ? [['dose series', m(p.series.note)]] : []),
    ...(p.atMargin ? [['above the threshold: state, growth time, wavelength', `${m(p.atMargin.state)}, ${m(amt(p.atMargin.growthTime))}, ${m(amt(p.atMargin.wavelength))}`]] : []),
  ]), '');
  out.push('## Stocks', '', table(['substance', 'stock', 'concentration', 'from'], sh.stocks.map((s) => [m(s.name), m(s.described), m(amt(s.concentration)), s.source])), '');
  out.push(`Sample volume ${m(amt(sh.options.sampleVolume))}, ${sh.options.replicates} replicate(s), smallest volume ${m(amt(sh.options.minVolume))}, overage ${Math.round(sh.options.overage * 100)} %, diluent ${m(sh.options.buffer)}.`, '');
  if (sh.dilutions.length) {
    out.push('## Intermediate dilutions', '');
    for (const d of sh.dilutions) out.push(`**${m(d.name)}**: make ${m(amt(d.volume))} at ${m(amt(d.concentration))}`, '', steps(d.steps), '');
  }
  if (sh.masterMix) out.push('## Master mix', '', `For ${sh.masterMix.tubes} tubes plus overage: ${m(amt(sh.masterMix.total))}, ${m(amt(sh.masterMix.perTube))} per tube.`, '', steps(sh.masterMix.steps), '');
  out.push('## Samples (fuel last, then mix and start the clock)', '');
  for (const s of sh.samples) out.push(`**${m(s.name)}**${s.dose ? ` — dopant ${m(amt(s.dose))}` : ''} · ${s.tubes} tube(s)`, '', steps(s.steps), '');
  out.push('## Imaging plan', '', table(['setting', 'value'], [
    ['frame interval', m(amt(sh.imaging.frameInterval))],
    ['duration', m(amt(sh.imaging.duration))],
    ['fuel lasts about', m(amt(sh.imaging.fuelLife))],
    ['gas passes its solubility after', sh.imaging.gasSaturation ? `${m(sh.imaging.gasSaturation.chemical)}: ${m(amt(sh.imaging.gasSaturation.time))}` : m(amt(null))],
    ['expected wavelength · chamber', `${m(amt(sh.imaging.wavelength))} · ${m(amt(sh.imaging.chamberLength))}`],
    ['suggested field of view', m(amt(sh.imaging.fieldOfView))],
  ]), '', ...sh.imaging.notes.map((n) => `- ${m(n)}`), '');
  if (sh.warnings.length) out.push('## Practical warnings', '', ...sh.warnings.map((w) => `- **${m(w.code)}**: ${m(w.message)}`), '');
  out.push('## Hazards and safe handling', '');
  for (const h of sh.hazards) {
    out.push(`### ${m(h.name)}`, '');
    for (const a of h.asHandled) {
      const c = a.classification;
      if (a.classified === false) {
        out.push(`- ${m(a.where)}: **${m(NOT_CLASSIFIED)}**`);
        continue;
      }
      out.push(`- ${m(a.where)}: ${c.statements.length ? `${c.signal ? `**${c.signal}** · ` : ''}${c.statements.map((s) => `${s.code} ${m(s.text)}`).join('; ')}${c.pictograms.length ? ` · ${c.pictograms.join(', ')}` : ''}` : 'no hazard statement applies at this concentration under the shelf’s bands'}`);
    }
    for (const [k, v] of [['Incompatible with', h.incompatibilities], ['Handling', h.handling], ['Storage', h.storage], ['Disposal', h.disposal]] as const) if (v) out.push(`- ${k}: ${m(v)}`);
    out.push(`- ${m(h.verify)}${h.source ? ` Source of these data, as stored on the shelf: ${m(h.source)}` : ''}`, '');
  }
  out.push(...sh.safety.map((x) => `- ${m(x)}`), '');
  out.push('## Traceability', '', table(['role', 'shelf item', 'revision', 'revision id'], sh.shelfRevisions.map((r) => [r.role, m(r.id), String(r.revision), String(r.revisionId)])), '');
  return out.join('\n');
}
