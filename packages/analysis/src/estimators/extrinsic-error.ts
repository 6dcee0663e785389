/**
 * Extrinsic rotation error: the angle between the manifest's and the estimated imu_T_odom rotation, with its
 * 1-sigma, and the part of the error that the motion actually observed.
 * e = Log(X_manifestᵀ·X_est) (rotation vector in the odometry body frame). σ of |e| = √(uᵀΣu), u = e/|e|
 * (first-order propagation). Directions whose σ exceeds 0.25° (e.g. the vertical axis of a ground robot that only
 * turns about it) are projected out for the observed part, so a poorly determined axis cannot raise a finding.
 */
import { quat } from '@plumbline/geometry';
import { symmetricEigen } from './small-math.ts';
import { noScalar, scalar, type ScalarResult } from './types.ts';

const DEG = 180 / Math.PI;

export function extrinsicError(prior: Float64Array, est: Float64Array, cov: Float64Array): { estimate: ScalarResult; observedDeg: number | null } {
  const d = quat.multiply(quat.create(), quat.conjugate(quat.create(), prior), est);
  const e = quat.toRotationVector(new Float64Array(3), d);
  const ang = Math.hypot(e[0]!, e[1]!, e[2]!);
  const { values, vectors } = symmetricEigen(cov, 3);
  const limit = (0.25 / DEG) ** 2;
  let obs2 = 0, worst = 0;
  for (let i = 0; i < 3; i++) {
    const v = [vectors[i]!, vectors[3 + i]!, vectors[6 + i]!];
    const c = v[0]! * e[0]! + v[1]! * e[1]! + v[2]! * e[2]!;
    if (values[i]! <= limit) obs2 += c * c;
    worst = Math.max(worst, values[i]!);
  }
  let s2 = 0;
  if (ang > 1e-9) {
    for (let a = 0; a < 3; a++) for (let b = 0; b < 3; b++) s2 += (e[a]! / ang) * cov[a * 3 + b]! * (e[b]! / ang);
  } else s2 = (cov[0]! + cov[4]! + cov[8]!) / 3;
  const observedDeg = Math.sqrt(obs2) * DEG;
  if (Math.sqrt(worst) * DEG > 5) {
    return { estimate: noScalar('deg', 'unobservable: the motion turns about too few axes to determine the extrinsic rotation'), observedDeg };
  }
  return { estimate: scalar(ang * DEG, Math.sqrt(s2) * DEG, 'deg'), observedDeg };
}
