import { gzipSync } from 'node:zlib';
import { analyzeBundleDetailed, trajectoryCsv, type AnalyzeOptions } from '@plumbline/analysis';
import type { Policy, Report } from '@plumbline/contracts';

/** What one analysis produces: the report and the repaired trajectory CSV, gzipped (null when not produced). */
export interface AnalysisOutput {
  report: Report;
  repairedCsvGz: Uint8Array | null;
}

/** An `Analyze` may answer with the report alone (tests, tools) or with the full output. */
export function toAnalysisOutput(r: Report | AnalysisOutput): AnalysisOutput {
  return 'repairedCsvGz' in r ? r : { report: r, repairedCsvGz: null };
}

/**
 * Reads a bundle once and produces the report and the repaired trajectory (pose-graph corrected, metric when the scale
 * was estimated; the original odometry when there was nothing to repair) as gzipped CSV in the odometry format, the
 * same bytes `repairedTrajectoryCsv` of the analysis package gives, without a second analysis.
 */
export async function analyseWithTrajectory(path: string, policy: Policy, options: AnalyzeOptions = {}): Promise<AnalysisOutput> {
  const { report, repaired, odometry } = await analyzeBundleDetailed(path, policy, options);
  const csv = trajectoryCsv(repaired ? repaired.columns : odometry);
  return { report, repairedCsvGz: gzipSync(csv, { level: 6 }) };
}
