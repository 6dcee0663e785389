import type { Policy } from '@plumbline/contracts';
import { loadPolicy } from '@plumbline/config';

/**
 * The policy resolver of a worker: the configured policy (or the built-in default) answers to its own name and to
 * `default`; any other name is unknown. The file is read once, at start-up.
 */
export function createPolicyResolver(policyFile: string | null): (name: string | null) => Policy | null {
  const policy = loadPolicy(policyFile);
  return (name) => (name === null || name === 'default' || name === policy.name ? policy : null);
}
