/**
 * A field for a physical value as people type it (`0.22 um^2/s`, `50 mM`, `0.1 %`), with an optional
 * standard uncertainty beside it. As the user types, the service's own unit reader
 * (POST /api/units/read) answers the SI value or the error, shown inline under the field, so what
 * the form sends is what the page showed.
 */
import { api, ApiError } from './api.js';
import { debounce, h, uid } from './dom.js';
import { problemWords } from './words.js';
import { formatNumber } from './format.js';

export type Quantity =
  | 'dimensionless'
  | 'length'
  | 'time'
  | 'rate'
  | 'diffusivity'
  | 'numberDensity'
  | 'concentration'
  | 'amountRate'
  | 'mobility'
  | 'massDensity'
  | 'molarMass'
  | 'temperature'
  | 'viscosity'
  /** a volume (sample, tube, chamber): not a shelf field, read by /api/units/read all the same */
  | 'volume';

/** What the unit reader answers: the value read, or (still a 200) why it cannot be read. */
export type ReadAnswer = { ok: true; si: number; sd: number; siUnit: string; display: string } | { ok: false; error: string; message: string };

/** A number in SI written compactly for the preview line (2 × 10¹⁴, not 200000000000000). */
const siText = (x: number) => formatNumber(x, 4);

export interface QuantityField {
  el: HTMLElement;
  input: HTMLInputElement;
  sdInput: HTMLInputElement | null;
  /** the value as typed: a string, `{ value, sd }` with an uncertainty, or undefined when empty */
  value(): string | { value: string; sd: string } | undefined;
  set(v: unknown): void;
  /** true while the last text typed could not be read */
  invalid(): boolean;
}

/** The text of a stored or typed value: `"0.22 um^2/s"`, `{ value, sd }`, or `{ input, sdInput }` as the shelf keeps it. */
export function typedText(q: unknown): { value: string; sd: string } {
  if (q === null || q === undefined) return { value: '', sd: '' };
  if (typeof q === 'string' || typeof q === 'number') return { value: String(q), sd: '' };
  const o = q as Record<string, unknown>;
  if ('input' in o) return { value: String(o.input ?? ''), sd: o.sdInput === undefined || o.sdInput === null ? '' : String(o.sdInput) };
  if ('value' in o) return { value: String(o.value ?? ''), sd: o.sd === undefined || o.sd === null ? '' : String(o.sd) };
  return { value: '', sd: '' };
}

export function quantityField(o: { label: string; quantity: Quantity; sign?: 'positive' | 'nonnegative' | 'any'; value?: unknown; withSd?: boolean; placeholder?: string; required?: boolean; name?: string }): QuantityField {
  const id = uid('q');
  const t = typedText(o.value);
  const input = h('input', { id, type: 'text', name: o.name ?? id, value: t.value, placeholder: o.placeholder ?? '', autocomplete: 'off', spellcheck: 'false', ...(o.required ? { required: true } : {}) });
  const sdInput = o.withSd ? h('input', { id: `${id}-sd`, type: 'text', value: t.sd, placeholder: 'standard uncertainty', autocomplete: 'off', spellcheck: 'false', class: 'sd' }) : null;
  const out = h('output', { for: id, class: 'si', 'aria-live': 'polite' });
  let bad = false;
  let seq = 0;
  const check = debounce(async () => {
    const mine = ++seq;
    const v = input.value.trim();
    const s = sdInput?.value.trim() ?? '';
    if (!v) {
      bad = Boolean(o.required);
      out.textContent = o.required ? 'required' : '';
      out.className = o.required ? 'si error' : 'si';
      input.setAttribute('aria-invalid', String(bad));
      return;
    }
    try {
      const r = await api<ReadAnswer>('/api/units/read', { body: { value: s ? { value: v, sd: s } : v, quantity: o.quantity, sign: o.sign ?? 'any' } });
      if (mine !== seq) return;
      if (!r.ok) throw new ApiError(200, r.error, r.message, r);
      bad = false;
      out.textContent = `= ${r.display}  (SI ${r.siUnit === '1' ? 'fraction ' : ''}${siText(r.si)}${r.siUnit === '1' ? '' : ` ${r.siUnit}`}${r.sd > 0 ? ` ± ${formatNumber(r.sd, 2)}` : ''})`;
      out.className = 'si ok';
    } catch (e) {
      if (mine !== seq) return;
      bad = true;
      out.textContent = e instanceof ApiError ? problemWords(e.message.replace(/^value(\.value|\.sd)?: /, '')) : String(e);
      out.className = 'si error';
    }
    input.setAttribute('aria-invalid', String(bad));
  }, 200);
  input.addEventListener('input', check);
  sdInput?.addEventListener('input', check);
  if (t.value) check();
  const label = h('label', { for: id }, o.label);
  const el = h('div', { class: 'field quantity' }, label, h('div', { class: 'pair' }, input, sdInput ? h('span', { 'aria-hidden': 'true' }, '±') : null, sdInput ? h('label', { for: sdInput.id, class: 'visually-hidden' }, `${o.label}: standard uncertainty`) : null, sdInput), out);
  return {
    el,
    input,
    sdInput,
    value() {
      const v = input.value.trim();
      if (!v) return undefined;
      const s = sdInput?.value.trim();
      return s ? { value: v, sd: s } : v;
    },
    set(v) {
      const x = typedText(v);
      input.value = x.value;
      if (sdInput) sdInput.value = x.sd;
      check();
    },
    invalid: () => bad,
  };
}
