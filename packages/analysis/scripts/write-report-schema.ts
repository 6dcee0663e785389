// Regenerates docs/report-schema.json from the zod Report schema.
// Run: node --import tsx packages/analysis/scripts/write-report-schema.ts
import { writeFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { reportJsonSchema } from '@plumbline/contracts';

const target = fileURLToPath(new URL('../../../docs/report-schema.json', import.meta.url));
writeFileSync(target, reportJsonSchema());
process.stdout.write(`wrote ${target}\n`);
