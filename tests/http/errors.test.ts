/** The error handler hides the text of internal errors and maps domain errors to 422. */
import { describe, expect, it, vi } from 'vitest';
import { EngineDomainError } from '../../server/engine/types.js';
import { errorHandler } from '../../server/http/errors.js';

function fakeReply() {
  const r = { status: 0, body: undefined as unknown, code(s: number) { r.status = s; return r; }, send(b: unknown) { r.body = b; return r; } };
  return r;
}
const req = { log: { error: vi.fn() } };

describe('error handler', () => {
  it('500 without the message of an unexpected error, which is logged', () => {
    const reply = fakeReply();
    errorHandler.call(null, new Error('secret path /home/x/db failed'), req as never, reply as never);
    expect(reply.status).toBe(500);
    expect(reply.body).toEqual({ error: 'internal', message: 'internal error' });
    expect(req.log.error).toHaveBeenCalled();
  });
  it('422 for a domain error, with its code', () => {
    const reply = fakeReply();
    errorHandler.call(null, new EngineDomainError('overflow', 'too big'), req as never, reply as never);
    expect(reply.status).toBe(422);
    expect(reply.body).toEqual({ error: 'domain', code: 'overflow', message: 'too big' });
  });
});
