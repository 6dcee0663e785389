// Regenerates packages/analysis/policy/default.json from DEFAULT_POLICY.
// Run: node --import tsx packages/analysis/scripts/write-default-policy.ts
import { writeFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { DEFAULT_POLICY } from '@plumbline/contracts';
import { policyFileText } from '../src/triage/policy-hash.ts';

const target = fileURLToPath(new URL('../policy/default.json', import.meta.url));
writeFileSync(target, policyFileText(DEFAULT_POLICY));
process.stdout.write(`wrote ${target}\n`);
