import { createHash } from 'node:crypto';
import { canonicalJson, type Policy } from '@plumbline/contracts';

/**
 * SHA-256 (hex) of the canonical JSON of a policy (sorted keys, no whitespace; see `canonicalJson`).
 * Two policies with the same content hash the same whatever their key order.
 */
export function policyHash(policy: Policy): string {
  return createHash('sha256').update(canonicalJson(policy), 'utf8').digest('hex');
}

/** The committed policy file text for a policy: 2-space JSON with sorted keys and a trailing newline. */
export function policyFileText(policy: Policy): string {
  return `${JSON.stringify(JSON.parse(canonicalJson(policy)), null, 2)}\n`;
}
