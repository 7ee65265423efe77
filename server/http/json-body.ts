/**
 * The JSON body parser (replaces fastify's own for application/json):
 *
 * - the nesting depth is checked on the text, iteratively, before anything is
 *   parsed: a body nested deeper than LIMITS.depth is a 400 naming where, never a
 *   stack overflow further on (a validator, a copy, a problem collector);
 * - malformed JSON is a 400 `bad-request` with code `invalid-json` and the
 *   parser's reason (cut short: a body is never echoed at length);
 * - an own key `__proto__` anywhere is a 400 naming its path (JSON.parse keeps it
 *   as an ordinary key, but a later spread or Object.assign would not).
 */
import type { FastifyInstance, FastifyRequest } from 'fastify';
import { LIMITS } from '../schema/limits.js';
import { formatPath } from '../schema/mixture.js';
import { RequestValidationError } from './errors.js';

/** A client error with a status and a code, shown by the error handler as `{ error: 'bad-request', code, message }`. */
export class BadBodyError extends Error {
  override readonly name = 'BadBodyError';
  readonly statusCode = 400;
  constructor(
    readonly code: string,
    message: string,
  ) {
    super(message);
  }
}

interface Frame {
  object: boolean;
  /** the current key (object) or index (array) */
  key: string | number;
  /** in an object: the next string is a key */
  expectKey: boolean;
}

/**
 * The path of the first container nested deeper than `max` levels, or null when
 * none is. Iterative: a scan over the characters, strings skipped whole. It only
 * counts brackets; whether the text is JSON at all is JSON.parse's business.
 */
export function tooDeep(text: string, max: number): (string | number)[] | null {
  const stack: Frame[] = [];
  const n = text.length;
  let i = 0;
  while (i < n) {
    const c = text.charCodeAt(i);
    if (c === 0x22 /* " */) {
      let j = i + 1;
      while (j < n) {
        const d = text.charCodeAt(j);
        if (d === 0x5c /* \ */) j += 2;
        else if (d === 0x22) break;
        else j++;
      }
      const top = stack[stack.length - 1];
      if (top?.object && top.expectKey) {
        const raw = text.slice(i + 1, Math.min(j, i + 1 + LIMITS.id));
        top.key = raw;
      }
      i = j + 1;
      continue;
    }
    if (c === 0x7b /* { */ || c === 0x5b /* [ */) {
      if (stack.length >= max) return stack.map((f) => f.key);
      stack.push({ object: c === 0x7b, key: c === 0x7b ? '' : 0, expectKey: true });
    } else if (c === 0x7d /* } */ || c === 0x5d /* ] */) {
      stack.pop();
    } else if (c === 0x2c /* , */) {
      const top = stack[stack.length - 1];
      if (top) {
        if (top.object) top.expectKey = true;
        else top.key = (top.key as number) + 1;
      }
    } else if (c === 0x3a /* : */) {
      const top = stack[stack.length - 1];
      if (top) top.expectKey = false;
    }
    i++;
  }
  return null;
}

/** The path of the first own `__proto__` key in a parsed value, or null (iterative; the depth is already bounded). */
export function protoKey(value: unknown): (string | number)[] | null {
  const todo: [unknown, (string | number)[]][] = [[value, []]];
  while (todo.length > 0) {
    const [v, path] = todo.pop()!;
    if (v === null || typeof v !== 'object') continue;
    if (Array.isArray(v)) {
      for (let k = v.length - 1; k >= 0; k--) if (v[k] !== null && typeof v[k] === 'object') todo.push([v[k], [...path, k]]);
      continue;
    }
    if (Object.hasOwn(v, '__proto__')) return [...path, '__proto__'];
    for (const [k, x] of Object.entries(v)) if (x !== null && typeof x === 'object') todo.push([x, [...path, k]]);
  }
  return null;
}

/** Parse a JSON body within the limits, or throw the 400 that says what is wrong. */
export function parseJsonBody(text: string, maxDepth: number = LIMITS.depth): unknown {
  if (text.charCodeAt(0) === 0xfeff) text = text.slice(1); // a byte-order mark, as some editors save files
  if (text.trim() === '') throw new BadBodyError('empty-json', 'the body is empty but content-type is application/json: send a JSON document, or no content-type');
  const deep = tooDeep(text, maxDepth);
  if (deep !== null) {
    throw new RequestValidationError('body', [{ path: formatPath(deep), message: `nested deeper than ${maxDepth} levels (objects and arrays): no document brink reads is nested so deep` }]);
  }
  let value: unknown;
  try {
    value = JSON.parse(text);
  } catch (e) {
    const reason = e instanceof Error ? e.message : String(e);
    throw new BadBodyError('invalid-json', `the body is not valid JSON: ${reason.length > 200 ? reason.slice(0, 200) + '…' : reason}`);
  }
  const proto = protoKey(value);
  if (proto !== null) throw new RequestValidationError('body', [{ path: formatPath(proto), message: 'the key "__proto__" is not allowed' }]);
  return value;
}

/** Install the parser for application/json (and +json types) in place of fastify's own. */
export function registerJsonBody(app: FastifyInstance, maxDepth: number = LIMITS.depth): void {
  app.removeContentTypeParser('application/json');
  const parse = (_req: FastifyRequest, body: string | Buffer, done: (err: Error | null, body?: unknown) => void) => {
    try {
      done(null, parseJsonBody(typeof body === 'string' ? body : body.toString('utf8'), maxDepth));
    } catch (e) {
      done(e as Error);
    }
  };
  app.addContentTypeParser('application/json', { parseAs: 'string' }, parse);
}
