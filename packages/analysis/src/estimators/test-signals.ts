/**
 * Small synthetic signals for the estimator unit tests (not exported from the package): IMU and odometry columns
 * generated from closed-form motions. Not a simulator: no noise model beyond what a test adds explicitly.
 */
import type { ImuColumns, OdometryColumns } from '@plumbline/bundle';

export function makeImu(n: number, rateHz: number, t0 = 0): ImuColumns {
  const t = new Float64Array(n);
  for (let i = 0; i < n; i++) t[i] = t0 + i / rateHz;
  const z = () => new Float64Array(n);
  return { n, t, gx: z(), gy: z(), gz: z(), ax: z(), ay: z(), az: z() };
}

export function makeOdometry(n: number, rateHz: number, t0 = 0): OdometryColumns {
  const t = new Float64Array(n);
  for (let i = 0; i < n; i++) t[i] = t0 + i / rateHz;
  const z = () => new Float64Array(n);
  const qw = z().fill(1);
  return { n, t, x: z(), y: z(), z: z(), qw, qx: z(), qy: z(), qz: z(), quality: null };
}

export { createRng, gaussian } from '@plumbline/geometry/testing';

/** Throws with a named quantity when |actual − expected| > tol (elementwise for arrays). */
export function expectNear(actual: number | ArrayLike<number>, expected: number | ArrayLike<number>, tol: number, what: string): void {
  const a = typeof actual === 'number' ? [actual] : Array.from(actual);
  const e = typeof expected === 'number' ? [expected] : Array.from(expected);
  if (a.length !== e.length) throw new Error(`${what}: length ${a.length} vs ${e.length}`);
  a.forEach((x, i) => {
    const err = Math.abs(x - e[i]!);
    if (!(err <= tol)) throw new Error(`${what}[${i}]: got ${x}, expected ${e[i]} (|err| ${err} > ${tol})`);
  });
}
