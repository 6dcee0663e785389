import { readFileSync } from 'node:fs';
import { DEFAULT_POLICY, Policy } from '@plumbline/contracts';

/**
 * The policy resolver of a worker: the configured policy file (or the built-in default) answers to its own name and
 * to `default`; any other name is unknown. Read once at start-up; a bad file stops the worker with the file named.
 */
export function createPolicyResolver(policyFile: string | null): (name: string | null) => Policy | null {
  let policy: Policy = DEFAULT_POLICY;
  if (policyFile) {
    let json: unknown;
    try {
      json = JSON.parse(readFileSync(policyFile, 'utf8'));
    } catch (err) {
      throw new Error(`policy file ${policyFile}: ${(err as Error).message}`);
    }
    const r = Policy.safeParse(json);
    if (!r.success) {
      const i = r.error.issues[0];
      throw new Error(`policy file ${policyFile}: ${i ? `${i.path.join('.')}: ${i.message}` : 'invalid'}`);
    }
    policy = r.data;
  }
  return (name) => (name === null || name === 'default' || name === policy.name ? policy : null);
}
