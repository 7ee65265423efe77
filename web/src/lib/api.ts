/**
 * The pages talk to the service only through its HTTP API, with this one function. JSON in and out;
 * a write always declares a JSON body (the service refuses body-less or form-like writes). A service
 * shared by a lab may ask for an access token: the page asks once (however many requests were
 * refused at the same moment), keeps it in this tab only (sessionStorage) and sends it as
 * `Authorization: Bearer …`.
 */

export interface Problem {
  path: string;
  message: string;
}

/** A refused or failed request, with the service's own words. */
export class ApiError extends Error {
  override readonly name = 'ApiError';
  constructor(
    readonly status: number,
    readonly code: string,
    message: string,
    readonly body: Record<string, unknown>,
  ) {
    super(message);
  }
  get problems(): Problem[] {
    return Array.isArray(this.body.problems) ? (this.body.problems as Problem[]) : [];
  }
}

const TOKEN_KEY = 'brink-token';
export const authHeaders = (): Record<string, string> => {
  const t = sessionStorage.getItem(TOKEN_KEY);
  return t ? { authorization: `Bearer ${t}` } : {};
};

let asking: Promise<boolean> | null = null;
/** Ask for a token once for every request refused while the question is open. */
function askToken(why: string): Promise<boolean> {
  asking ??= new Promise<boolean>((resolve) => {
    const t = window.prompt(`${why}\n\nYour access token (kept in this browser tab only):`);
    if (t && t.trim()) sessionStorage.setItem(TOKEN_KEY, t.trim());
    resolve(Boolean(t && t.trim()));
    setTimeout(() => (asking = null), 0);
  });
  return asking;
}

export interface ApiOptions {
  method?: 'GET' | 'POST' | 'PUT' | 'PATCH' | 'DELETE';
  /** sent as JSON */
  body?: unknown;
  signal?: AbortSignal;
}

async function read(r: Response): Promise<unknown> {
  const type = r.headers.get('content-type') ?? '';
  if (type.includes('json')) return r.json();
  return r.text();
}

export async function api<T = unknown>(path: string, o: ApiOptions = {}, ask = true): Promise<T> {
  const method = o.method ?? (o.body === undefined ? 'GET' : 'POST');
  const sentToken = sessionStorage.getItem(TOKEN_KEY);
  const init: RequestInit = { method, headers: { ...(method !== 'GET' ? { 'content-type': 'application/json' } : {}), ...authHeaders() } };
  if (o.body !== undefined) init.body = JSON.stringify(o.body);
  else if (method !== 'GET') init.body = '{}';
  if (o.signal) init.signal = o.signal;
  let r: Response;
  try {
    r = await fetch(path, init);
  } catch (e) {
    if ((e as Error).name === 'AbortError') throw e;
    throw new ApiError(0, 'unreachable', 'The brink service did not answer: is it still running?', {});
  }
  const body = await read(r);
  if (r.status === 401 && ask) {
    const b = (body ?? {}) as { error?: string; message?: string };
    // refused for want of a token that this tab has been given since the request left (a request sent
    // at the same moment as the one that asked): send it again with the token, without asking twice
    const now = sessionStorage.getItem(TOKEN_KEY);
    if (now && now !== sentToken) return api<T>(path, o, false);
    if (b.error !== 'token-required') sessionStorage.removeItem(TOKEN_KEY);
    if (await askToken(b.message ?? 'This service needs an access token.')) return api<T>(path, o, false);
  }
  if (!r.ok) {
    const b = (typeof body === 'object' && body !== null ? body : { message: String(body) }) as Record<string, unknown>;
    throw new ApiError(r.status, String(b.error ?? r.status), String(b.message ?? `the service answered ${r.status}`), b);
  }
  return body as T;
}

/** Text (Markdown, HTML) from the API, with the token when there is one. */
export async function apiText(path: string): Promise<string> {
  const r = await fetch(path, { headers: authHeaders() });
  if (!r.ok) {
    const b = (await read(r)) as { message?: string };
    throw new ApiError(r.status, String(r.status), b?.message ?? `the service answered ${r.status}`, {});
  }
  return r.text();
}

/** An error in words a researcher reads: the service's message, and each problem on its own line. */
export function describeError(e: unknown): string[] {
  if (e instanceof ApiError) {
    const head = e.status === 409 ? `Someone changed this first (409): ${e.message}` : e.status === 429 ? `The service is busy (429): ${e.message}` : e.message;
    const probs = e.problems.map((p) => (p.path ? `${p.path}: ${p.message}` : p.message));
    return probs.length > 1 ? [head.split('; ')[0] ?? head, ...probs] : [head];
  }
  return [e instanceof Error ? e.message : String(e)];
}
