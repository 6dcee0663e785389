export {
  analyzeBundle, analyzeBundleDetailed, analyzeRun, analyzeRunDetailed, analyzeRunParallel, repairedTrajectoryCsv,
  originalTrajectoryCsv, ANALYSIS_VERSION, type AnalyzeOptions, type RunData, type RunAnalysis,
} from './analyze-bundle.ts';
export { analyzeInertial } from './estimators/inertial.ts';
export type { InertialAnalysis, InertialEstimates } from './estimators/inertial-types.ts';
export type { InertialFinding } from './estimators/types.ts';
export { compareWithGnss, type GnssComparison, type GnssResult } from './gnss/gnss-compare.ts';
export { gateFixes, type FixGating } from './gnss/fix-gating.ts';
export { analyzeLoops, type LoopAnalysis, type LoopResult } from './loops/loop-analysis.ts';
export { repairTrajectory, trajectoryCsv, type RepairedTrajectory } from './loops/repair.ts';
export { createPoseGraph, createPoseGraphSolver, optimizePoseGraph, type PoseGraph } from './loops/pose-graph.ts';
export { gateLoops } from './loops/loop-gating.ts';
export { buildFlags, type Finding } from './triage/flags.ts';
export { buildSegments, healthScore, verdictOf } from './triage/score.ts';
export { policyHash, policyFileText } from './triage/policy-hash.ts';
export { buildReport } from './report/build-report.ts';
export { reportJsonSchema } from '@plumbline/contracts';
export * from './fleet/index.ts';
export { createThreadClient, threadErrorOf, type ThreadClient, type ThreadError } from './parallel/thread-client.ts';
