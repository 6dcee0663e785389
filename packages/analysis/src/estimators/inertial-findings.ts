/**
 * Findings of the inertial analysis: measured anomalies with interval and value, in the unit of the matching policy
 * threshold (packages/contracts/src/policy.ts). No severity here. Reporting floors (below every default warn level)
 * only keep the list short: they are not policy.
 */
import { stretches, unobservableStretches } from './findings.ts';
import type { InertialAnalysis } from './inertial-types.ts';
import type { PoseJump } from './pose-jump.ts';
import type { InertialFinding } from './types.ts';

export function buildFindings(
  a: InertialAnalysis, jumps: PoseJump[], extrinsicObservedDeg: number | null, windowS: number, gravityAligned: boolean,
): InertialFinding[] {
  const out: InertialFinding[] = [];
  const { integrity: ig, estimates: est } = a;
  const tFirst = ig.imu.tFirst ?? 0, tLast = ig.imu.tLast ?? 0;
  for (const g of ig.imu.gaps) out.push({ kind: 'imu-gap', ...g, value: g.tEnd - g.tStart, unit: 's', detail: 'IMU samples missing' });
  for (const g of ig.odometry.gaps) {
    out.push({ kind: 'odometry-gap', tStart: g.tStart - a.clock.offsetS, tEnd: g.tEnd - a.clock.offsetS, value: g.tEnd - g.tStart, unit: 's', detail: 'odometry poses missing' });
  }
  for (const s of ig.saturation) out.push({ kind: 'imu-saturation', tStart: s.tStart, tEnd: s.tEnd, value: s.samples, unit: 'samples', detail: `${s.axis} pinned at the range limit` });
  const u = ig.units;
  if (u.accelRestRatio !== null) {
    out.push({ kind: 'units', tStart: tFirst, tEnd: tLast, value: Math.abs(u.accelRestRatio - 1), unit: 'ratio', detail: `|specific force| at rest / normal gravity = ${u.accelRestRatio.toFixed(4)} (${u.accelRestSource})` });
  }
  if (u.gyroOdometryRateRatio !== null) {
    out.push({ kind: 'units', tStart: tFirst, tEnd: tLast, value: Math.abs(u.gyroOdometryRateRatio - 1), unit: 'ratio', detail: `gyro rotation / odometry rotation = ${u.gyroOdometryRateRatio.toFixed(4)}` });
  }
  if (est.time_offset_s.value !== null) {
    const skew = est.clock_skew_ppm.value !== null ? `, skew ${est.clock_skew_ppm.value.toFixed(1)} ± ${est.clock_skew_ppm.sigma?.toFixed(1)} ppm` : '';
    out.push({ kind: 'time-offset', tStart: tFirst, tEnd: tLast, value: est.time_offset_s.value * 1000, unit: 'ms', detail: `odometry − IMU stamp ${(est.time_offset_s.value * 1000).toFixed(2)} ± ${((est.time_offset_s.sigma ?? 0) * 1000).toFixed(2)} ms${skew}` });
  }
  out.push(...stretches(a.series.rotation_residual_deg_s, windowS, 'rotation-mismatch', 'deg/s', 'gyro vs odometry rotation residual (RMS)', (v) => v >= 0.5));
  if (extrinsicObservedDeg !== null && est.extrinsic_rotation_error_deg.value !== null) {
    out.push({ kind: 'extrinsic-rotation', tStart: tFirst, tEnd: tLast, value: extrinsicObservedDeg, unit: 'deg', detail: `manifest vs estimated imu_T_odom rotation: ${est.extrinsic_rotation_error_deg.value.toFixed(3)} ± ${est.extrinsic_rotation_error_deg.sigma?.toFixed(3)}° (observed part ${extrinsicObservedDeg.toFixed(3)}°)` });
  }
  if (gravityAligned && est.gravity_tilt_deg.value !== null) {
    out.push({ kind: 'gravity-tilt', tStart: tFirst, tEnd: tLast, value: est.gravity_tilt_deg.value, unit: 'deg', detail: `gravity vs odometry world −z: ${est.gravity_tilt_deg.value.toFixed(3)} ± ${est.gravity_tilt_deg.sigma?.toFixed(3)}°` });
  }
  out.push(...scaleFindings(a, windowS));
  for (const j of jumps) out.push({ kind: 'pose-jump', tStart: j.tStart, tEnd: j.tEnd, value: j.jumpM, unit: 'm', detail: 'position step not explained by the IMU' });
  out.push(...unobservableStretches(a.series.scale, windowS, 'scale'));
  return out.sort((x, y) => x.tStart - y.tStart);
}

function scaleFindings(a: InertialAnalysis, windowS: number): InertialFinding[] {
  const out: InertialFinding[] = [];
  const run = a.estimates.scale.value;
  if (run === null) return out;
  const s = a.series.scale;
  const dev = (w: number) => (s.value[w]! / run - 1) * 100;
  out.push(...stretches(s, windowS, 'scale-drift', '%', 'window scale vs run scale', (v) => Number.isFinite(v) && Math.abs(v / run - 1) >= 0.01, dev));
  for (const st of a.scaleSteps) {
    out.push({ kind: 'scale-drift', tStart: st.t - st.sigmaS, tEnd: st.t + st.sigmaS, value: st.stepPct, unit: '%', detail: `scale step at ${st.t.toFixed(2)} ± ${st.sigmaS.toFixed(2)} s: ${st.before.toFixed(4)} → ${st.after.toFixed(4)}` });
  }
  return out;
}
