/** The one place the CLI reaches the analysis package. */
import { analyzeBundle } from '@plumbline/analysis';
import type { Policy, Report } from '@plumbline/contracts';

/** One bundle, analysed on two threads (GNSS, loops and pose graph on the second), as the worker does by default. */
export function analyze(bundlePath: string, policy?: Policy): Promise<Report> {
  return analyzeBundle(bundlePath, policy, { parallel: true });
}
