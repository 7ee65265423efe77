/**
 * Access tokens (migration 0009): created, listed and revoked from the command
 * line (`brink token …`), checked by the service on each request
 * (server/http/access.ts).
 *
 * A token is `brink_` followed by 43 characters of base64url: 32 bytes (256
 * bits) from the operating system's random source. Only its SHA-256 hash is
 * stored, with its first 12 characters (the prefix, 36 random bits) to
 * recognise it by in lists. A fast hash suffices here because the secret is
 * long and random: nobody can guess a 256-bit value, with or without the hash;
 * slow password hashes (scrypt, argon2) exist for short human-chosen secrets.
 */
import { createHash, randomBytes } from 'node:crypto';
import type { Db } from './db.js';

export const TOKEN_PREFIX = 'brink_';
/** characters of the secret kept in clear to recognise a token by */
const SHOWN = 12;

export interface AccessToken {
  id: number;
  holder: string;
  /** the first characters of the secret */
  prefix: string;
  createdAt: string;
  revokedAt: string | null;
}

interface Row {
  id: number;
  holder: string;
  prefix: string;
  created_at: string;
  revoked_at: string | null;
}

const toToken = (r: Row): AccessToken => ({ id: r.id, holder: r.holder, prefix: r.prefix, createdAt: r.created_at, revokedAt: r.revoked_at });

/** The hex SHA-256 of a secret, as stored. */
export const hashToken = (secret: string) => createHash('sha256').update(secret, 'utf8').digest('hex');

/** A token that could not be revoked (unknown, ambiguous, already revoked). */
export class TokenError extends Error {
  override readonly name = 'TokenError';
}

export type TokenCheck = { status: 'valid'; token: AccessToken } | { status: 'revoked'; token: AccessToken } | { status: 'unknown' };

export function tokensRepository(db: Db) {
  const st = {
    insert: db.prepare('INSERT INTO access_tokens (holder, prefix, hash, created_at) VALUES (?, ?, ?, ?)'),
    byId: db.prepare('SELECT id, holder, prefix, created_at, revoked_at FROM access_tokens WHERE id = ?'),
    byHash: db.prepare('SELECT id, holder, prefix, created_at, revoked_at FROM access_tokens WHERE hash = ?'),
    byPrefix: db.prepare('SELECT id, holder, prefix, created_at, revoked_at FROM access_tokens WHERE prefix = ?'),
    list: db.prepare('SELECT id, holder, prefix, created_at, revoked_at FROM access_tokens ORDER BY id'),
    active: db.prepare('SELECT COUNT(*) AS n FROM access_tokens WHERE revoked_at IS NULL'),
    revoke: db.prepare('UPDATE access_tokens SET revoked_at = ? WHERE id = ? AND revoked_at IS NULL'),
  };
  return {
    /** A new token for `holder`: the secret (shown once, never stored) and the stored row. */
    create(holder: string): { secret: string; token: AccessToken } {
      const name = holder.trim();
      if (name.length < 1 || name.length > 200) throw new TokenError('the holder is a name of 1 to 200 characters');
      // a clash of the 36-bit prefix is rare; draw again rather than fail
      for (let attempt = 0; ; attempt++) {
        const secret = TOKEN_PREFIX + randomBytes(32).toString('base64url');
        const prefix = secret.slice(0, SHOWN);
        if (st.byPrefix.get(prefix) && attempt < 10) continue;
        const info = st.insert.run(name, prefix, hashToken(secret), new Date().toISOString());
        return { secret, token: toToken(st.byId.get(Number(info.lastInsertRowid)) as Row) };
      }
    },
    list: (): AccessToken[] => (st.list.all() as Row[]).map(toToken),
    /** Tokens not revoked. */
    activeCount: (): number => (st.active.get() as { n: number }).n,
    /** What a presented secret is: a valid token, a revoked one, or nothing known. */
    check(secret: string): TokenCheck {
      if (!secret.startsWith(TOKEN_PREFIX) || secret.length > 200) return { status: 'unknown' };
      const row = st.byHash.get(hashToken(secret)) as Row | undefined;
      if (!row) return { status: 'unknown' };
      return row.revoked_at === null ? { status: 'valid', token: toToken(row) } : { status: 'revoked', token: toToken(row) };
    },
    /** Revoke a token named by its id, its prefix, or the whole secret. */
    revoke(ref: string): AccessToken {
      const r = ref.trim();
      let row: Row | undefined;
      if (/^\d+$/.test(r)) row = st.byId.get(Number(r)) as Row | undefined;
      else if (r.length > SHOWN) row = st.byHash.get(hashToken(r)) as Row | undefined;
      else row = st.byPrefix.get(r) as Row | undefined;
      if (!row) throw new TokenError(`no token "${r}" (name it by its id or prefix, as \`brink token list\` shows them)`);
      if (row.revoked_at !== null) throw new TokenError(`token ${row.id} (${row.prefix}…, ${row.holder}) was already revoked at ${row.revoked_at}`);
      st.revoke.run(new Date().toISOString(), row.id);
      return toToken(st.byId.get(row.id) as Row);
    },
  };
}

export type TokensRepository = ReturnType<typeof tokensRepository>;
