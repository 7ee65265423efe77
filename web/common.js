// Helpers shared by the pages: the API, values as typed, safe text.
export async function api(path, options = {}) {
  const r = await fetch(path, { ...options, headers: { 'content-type': 'application/json', ...(options.headers ?? {}) } });
  const body = r.headers.get('content-type')?.includes('json') ? await r.json() : await r.text();
  if (!r.ok) throw new Error(body?.message ?? String(body));
  return body;
}
export const typed = (q) => (q === undefined ? '' : typeof q === 'object' && q !== null && 'input' in q ? String(q.input) + (q.sdInput !== undefined ? ' ± ' + String(q.sdInput) : '') : String(q));
export function cell(text) {
  const td = document.createElement('td');
  td.textContent = text;
  return td;
}
export function row(...texts) {
  const tr = document.createElement('tr');
  tr.append(...texts.map((t) => (t instanceof Node ? wrap(t) : cell(t))));
  return tr;
}
function wrap(node) {
  const td = document.createElement('td');
  td.append(node);
  return td;
}
export const num = (x, digits = 4) => (x === null || x === undefined ? '—' : Math.abs(x) >= 1e5 || (Math.abs(x) < 1e-3 && x !== 0) ? x.toExponential(digits - 1) : String(Number(x.toPrecision(digits))));
