import { Policy, type StoredPolicy } from '@plumbline/contracts';
import { StoreError } from './errors.ts';
import { isoNow } from './rows.ts';
import type { PolicyRepository } from './fleet-types.ts';
import type { Db } from './types.ts';

/** A policy (name, version) is stored once; a changed document needs a new version. */
export class PolicyExistsError extends StoreError {
  constructor(name: string, version: string) {
    super('POLICY_EXISTS', `policy ${name} version ${version} already exists; store changes under a new version`);
  }
}


interface PolicyRow {
  name: string;
  version: string;
  hash: string;
  policy_json: string;
  created_by: string;
  created_at: string;
}

function toStored(r: PolicyRow): StoredPolicy {
  return { name: r.name, version: r.version, hash: r.hash, created_at: r.created_at, created_by: r.created_by, policy: Policy.parse(JSON.parse(r.policy_json)) };
}

const COLS = 'name, version, hash, policy_json, created_by, created_at';

/** Versioned policy documents (migration 0002). */
export function createPolicyRepository(db: Db): PolicyRepository {
  const exists = db.prepare('SELECT 1 FROM policies WHERE name = ? AND version = ?').pluck();
  const nextSeq = db.prepare('SELECT COALESCE(max(seq), 0) + 1 FROM policies WHERE name = ?').pluck();
  const insert = db.prepare(`INSERT INTO policies (${COLS}, seq) VALUES (?, ?, ?, ?, ?, ?, ?)`);
  const one = db.prepare(`SELECT ${COLS} FROM policies WHERE name = ? AND version = ?`);
  const latest = db.prepare(`SELECT ${COLS} FROM policies WHERE name = ? ORDER BY seq DESC LIMIT 1`);
  const before = db.prepare(
    `SELECT ${COLS} FROM policies WHERE name = ? AND seq < (SELECT seq FROM policies WHERE name = ? AND version = ?) ORDER BY seq DESC LIMIT 1`,
  );
  const all = db.prepare(`SELECT ${COLS} FROM policies ORDER BY name, seq`);

  const create = db.transaction((policy: Policy, hash: string, createdBy: string, at: string): StoredPolicy => {
    if (exists.get(policy.name, policy.version) !== undefined) throw new PolicyExistsError(policy.name, policy.version);
    insert.run(policy.name, policy.version, hash, JSON.stringify(policy), createdBy, at, nextSeq.get(policy.name) as number);
    return { name: policy.name, version: policy.version, hash, created_at: at, created_by: createdBy, policy };
  });

  return {
    create: (policy, hash, createdBy, now = new Date()) => create.immediate(policy, hash, createdBy, isoNow(now)),
    get(name, version) {
      const row = (version === undefined ? latest.get(name) : one.get(name, version)) as PolicyRow | undefined;
      return row ? toStored(row) : null;
    },
    previous(name, version) {
      const row = before.get(name, name, version) as PolicyRow | undefined;
      return row ? toStored(row) : null;
    },
    list: () => (all.all() as PolicyRow[]).map(toStored),
  };
}
