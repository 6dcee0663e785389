import { createHash, randomBytes, timingSafeEqual } from 'node:crypto';
import type { Role, TokenInfo } from '@plumbline/contracts';
import { changeWatchOf } from './change-watch.ts';
import { isoNow } from './rows.ts';
import type { Db, TokenRepository } from './types.ts';

/**
 * API tokens: `plb_<id>_<secret>` with a 16-hex-char id and 32 random bytes of secret (base64url). Only the
 * SHA-256 of the whole token is stored: a fast hash is right for 256-bit random secrets (no dictionary to guess
 * from; slow password hashes exist for low-entropy human passwords — common practice). The id part is only used to
 * find the row; the secret is checked by comparing hashes with `crypto.timingSafeEqual`.
 */
const TOKEN_FORMAT = /^plb_([0-9a-f]{16})_([A-Za-z0-9_-]{43})$/;

interface TokenRow {
  id: string;
  role: Role;
  name: string;
  robot_id: string | null;
  token_hash: Buffer;
  created_at: string;
  revoked_at: string | null;
}

function toInfo(row: TokenRow): TokenInfo {
  return { id: row.id, role: row.role, name: row.name, robot_id: row.robot_id, created_at: row.created_at, revoked_at: row.revoked_at };
}

function sha256(text: string): Buffer {
  return createHash('sha256').update(text, 'utf8').digest();
}

// Compared against when the id is unknown, so an unknown id costs the same work as a wrong secret.
const DUMMY_HASH = sha256('plumbline-no-such-token');

export function createTokenRepository(db: Db): TokenRepository {
  const insert = db.prepare('INSERT INTO api_tokens (id, role, name, robot_id, token_hash, created_at) VALUES (?, ?, ?, ?, ?, ?)');
  const byId = db.prepare('SELECT id, role, name, robot_id, token_hash, created_at, revoked_at FROM api_tokens WHERE id = ?');
  const all = db.prepare('SELECT id, role, name, robot_id, token_hash, created_at, revoked_at FROM api_tokens ORDER BY created_at, id');
  const revoke = db.prepare('UPDATE api_tokens SET revoked_at = ? WHERE id = ? AND revoked_at IS NULL');

  const verifyUncached = (token: string): TokenInfo | null => {
    const m = TOKEN_FORMAT.exec(token);
    const row = m ? (byId.get(m[1]) as TokenRow | undefined) : undefined;
    const stored = row?.token_hash ?? DUMMY_HASH;
    const equal = timingSafeEqual(sha256(token), stored);
    if (!row || !equal || row.revoked_at !== null) return null;
    return toInfo(row);
  };
  // Tokens verified since the database last changed (bounded). Any write, by this connection or a commit by another
  // one, empties it (see change-watch.ts), so a revocation is effective on the next request.
  const changes = changeWatchOf(db);
  let verifiedAt = '';
  const verified = new Map<string, TokenInfo>();

  return {
    create(input) {
      if (input.role === 'robot' && !input.robot_id) throw new RangeError('a robot token needs a robot_id');
      const id = randomBytes(8).toString('hex');
      const token = `plb_${id}_${randomBytes(32).toString('base64url')}`;
      const now = isoNow();
      insert.run(id, input.role, input.name, input.robot_id ?? null, sha256(token), now);
      return { token, info: toInfo(byId.get(id) as TokenRow) };
    },
    verify(token) {
      const at = changes.stamp();
      if (at !== verifiedAt) {
        verified.clear();
        verifiedAt = at;
      }
      const known = verified.get(token);
      if (known) return { ...known };
      const info = verifyUncached(token);
      if (info) {
        if (verified.size >= 256) verified.clear();
        verified.set(token, info);
        return { ...info };
      }
      return null;
    },
    list: () => (all.all() as TokenRow[]).map(toInfo),
    revoke: (id) => revoke.run(isoNow(), id).changes > 0,
    countActive(role) {
      const sql = `SELECT count(*) FROM api_tokens WHERE revoked_at IS NULL${role ? ' AND role = ?' : ''}`;
      return db.prepare(sql).pluck().get(...(role ? [role] : [])) as number;
    },
  };
}
