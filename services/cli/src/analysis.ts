/** The one place the CLI reaches the analysis package. */
import { analyzeBundle } from '@plumbline/analysis';
import type { Policy, Report } from '@plumbline/contracts';

export function analyze(bundlePath: string, policy?: Policy): Promise<Report> {
  return analyzeBundle(bundlePath, policy);
}
