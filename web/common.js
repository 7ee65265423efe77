// Helpers shared by the pages: the API, values as typed, safe text.

// A service shared by a lab asks for an access token (README: Running brink for a whole lab): the page asks
// for it once, keeps it in this tab only (sessionStorage) and sends it as "Authorization: Bearer <token>".
const TOKEN_KEY = 'brink-token';
export const authHeaders = () => {
  const t = sessionStorage.getItem(TOKEN_KEY);
  return t ? { authorization: `Bearer ${t}` } : {};
};
function askToken(why) {
  const t = window.prompt(`${why}\n\nYour access token (kept in this browser tab only):`);
  if (!t || !t.trim()) return false;
  sessionStorage.setItem(TOKEN_KEY, t.trim());
  return true;
}
// JSON in and out; writes always declare a JSON body (the service refuses body-less or form-like writes)
export async function api(path, options = {}, ask = true) {
  const r = await fetch(path, { ...options, headers: { 'content-type': 'application/json', ...authHeaders(), ...(options.headers ?? {}) } });
  const body = r.headers.get('content-type')?.includes('json') ? await r.json() : await r.text();
  if (r.status === 401 && ask) {
    if (body?.error !== 'token-required') sessionStorage.removeItem(TOKEN_KEY);
    if (askToken(body?.message ?? 'This service needs an access token.')) return api(path, options, false);
  }
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
