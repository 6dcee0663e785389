import type { GnssColumns, LoopColumns, OdometryColumns } from '@plumbline/bundle';
import { resolvePolicy, type Policy, type PolicyThresholds, type RunManifest } from '@plumbline/contracts';
import { compareWithGnss, type GnssResult } from './gnss/gnss-compare.ts';
import { analyzeLoops, type LoopAnalysis } from './loops/loop-analysis.ts';
import { cumulativeDistance } from './loops/path.ts';

/** What the geometry part of an analysis reads: everything but the IMU. */
export interface GeometryInput {
  manifest: RunManifest;
  odometry: OdometryColumns;
  gnss: GnssColumns | null;
  loops: LoopColumns | null;
}

export interface GeometryResult {
  gnss: GnssResult | null;
  loops: LoopAnalysis;
}

/** The policy resolved for the run's site and model, and the odometry's cumulative path length. */
export interface RunContext {
  resolved: ReturnType<typeof resolvePolicy>;
  th: PolicyThresholds;
  dist: Float64Array;
}

export function runContext(manifest: RunManifest, odometry: OdometryColumns, policy: Policy): RunContext {
  const resolved = resolvePolicy(policy, manifest.site, manifest.robot_model ?? null);
  return { resolved, th: resolved.thresholds, dist: cumulativeDistance(odometry) };
}

/**
 * The part of the analysis that needs no IMU: GNSS comparison, then loop consistency and the pose graph (which use
 * the GNSS alignment when it succeeded). Pure.
 */
export function analyzeGeometry(input: GeometryInput, policy: Policy, ctx: RunContext = runContext(input.manifest, input.odometry, policy)): GeometryResult {
  const { manifest, odometry } = input;
  const gnss: GnssResult | null = input.gnss ? compareWithGnss(manifest, odometry, input.gnss, ctx.th) : null;
  const loops = analyzeLoops({ manifest, odometry, dist: ctx.dist, loops: input.loops, gnss: gnss && gnss.ok ? gnss : null, thresholds: ctx.th });
  return { gnss, loops };
}
