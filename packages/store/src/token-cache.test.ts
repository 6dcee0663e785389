import { describe, expect, it } from 'vitest';
import { createStore } from './store.ts';
import { useSharedDatabaseFile } from './testing/shared-file.ts';

/**
 * Verified tokens are remembered until the database changes; a revocation must still be effective on the very
 * next `verify`, whether it is made through the same connection, another connection (the CLI or another API
 * process on the same file) or raw SQL.
 */
const { open } = useSharedDatabaseFile('plumbline-token-cache-');

describe('token verification cache and revocation', () => {
  it('forgets a token revoked through the same connection', () => {
    const store = createStore(open());
    const { token, info } = store.tokens.create({ role: 'lead', name: 'shift-lead' });
    expect(store.tokens.verify(token)?.id).toBe(info.id);
    expect(store.tokens.verify(token)?.id).toBe(info.id);
    expect(store.tokens.revoke(info.id)).toBe(true);
    expect(store.tokens.verify(token)).toBeNull();
  });

  it('forgets a token revoked by another connection or by raw SQL', () => {
    const a = createStore(open());
    const db2 = open();
    const b = createStore(db2);
    const one = a.tokens.create({ role: 'robot', name: 'kestrel-01', robot_id: 'kestrel-01' });
    const two = a.tokens.create({ role: 'robot', name: 'plover-01', robot_id: 'plover-01' });
    expect(a.tokens.verify(one.token)?.robot_id).toBe('kestrel-01');
    expect(a.tokens.verify(two.token)?.robot_id).toBe('plover-01');
    expect(b.tokens.revoke(one.info.id)).toBe(true);
    expect(a.tokens.verify(one.token)).toBeNull();
    db2.prepare("UPDATE api_tokens SET revoked_at = '2026-12-02T00:00:00.000Z' WHERE id = ?").run(two.info.id);
    expect(a.tokens.verify(two.token)).toBeNull();
  });

  it('hands out copies, so a caller cannot change the remembered answer', () => {
    const store = createStore(open());
    const { token } = store.tokens.create({ role: 'lead', name: 'shift-lead' });
    const first = store.tokens.verify(token);
    if (first) first.role = 'admin';
    expect(store.tokens.verify(token)?.role).toBe('lead');
  });
});
