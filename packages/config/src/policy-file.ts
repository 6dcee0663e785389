import { readFileSync } from 'node:fs';
import { DEFAULT_POLICY, Policy } from '@plumbline/contracts';

/**
 * The triage policy named by `PLUMBLINE_POLICY_FILE`, or the built-in default when none is set. Read once at
 * start-up; a missing, malformed or invalid file throws an Error naming the file and the first bad field.
 */
export function loadPolicy(policyFile: string | null): Policy {
  if (!policyFile) return DEFAULT_POLICY;
  let json: unknown;
  try {
    json = JSON.parse(readFileSync(policyFile, 'utf8'));
  } catch (err) {
    throw new Error(`policy file ${policyFile}: ${(err as Error).message}`);
  }
  const r = Policy.safeParse(json);
  if (!r.success) {
    const i = r.error.issues[0];
    throw new Error(`policy file ${policyFile}: ${i ? `${i.path.join('.') || '(root)'}: ${i.message}` : 'invalid'}`);
  }
  return r.data;
}
