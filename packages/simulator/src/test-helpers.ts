/**
 * Shared test helpers: a closeness matcher and a strapdown integrator used as an independent check of the IMU
 * synthesis. Not exported from the package index.
 */
import { quat, vec3 } from '@plumbline/geometry';
import type { Quat, Vec3 } from '@plumbline/geometry';

export function expectClose(actual: number, expected: number, tol: number, what = 'value'): void {
  const err = Math.abs(actual - expected);
  if (!(err <= tol)) throw new Error(`${what}: got ${actual}, expected ${expected} (|err| ${err} > tol ${tol})`);
}

interface NavState {
  q: Quat;
  v: Vec3;
  p: Vec3;
}

const dq = quat.create();
const tmp = vec3.create();

/** State derivative for strapdown mechanisation in a flat, non-rotating ENU frame: ṗ = v, v̇ = R f + g, q̇ = ½ q ⊗ ω. */
function deriv(s: NavState, w: ArrayLike<number>, f: ArrayLike<number>, gravity: number, out: { q: Quat; v: Vec3; p: Vec3 }) {
  quat.set(dq, 0, w[0]!, w[1]!, w[2]!);
  quat.multiply(out.q, s.q, dq);
  for (let i = 0; i < 4; i++) out.q[i] = 0.5 * out.q[i]!;
  vec3.set(tmp, f[0]!, f[1]!, f[2]!);
  quat.rotateVec3(out.v, s.q, tmp);
  out.v[2] = out.v[2]! - gravity;
  vec3.copy(out.p, s.v);
}

/**
 * Classical RK4 over IMU samples at spacing h: each step of length 2h uses samples k, k+1 (midpoint) and k+2.
 * Returns the state after integrating samples [k0, k1] (k1 − k0 even).
 */
export function integrateRk4(
  gyro: readonly [Float64Array, Float64Array, Float64Array],
  accel: readonly [Float64Array, Float64Array, Float64Array],
  h: number,
  k0: number,
  steps: number,
  gravity: number,
  init: NavState,
  onStep?: (k: number, s: NavState) => void,
): NavState {
  const s: NavState = { q: quat.copy(quat.create(), init.q), v: vec3.copy(vec3.create(), init.v), p: vec3.copy(vec3.create(), init.p) };
  const ks = [0, 1, 2, 3].map(() => ({ q: quat.create(), v: vec3.create(), p: vec3.create() }));
  const y: NavState = { q: quat.create(), v: vec3.create(), p: vec3.create() };
  const w = new Float64Array(3), f = new Float64Array(3);
  const sample = (k: number) => {
    for (let i = 0; i < 3; i++) {
      w[i] = gyro[i]![k]!;
      f[i] = accel[i]![k]!;
    }
  };
  const H = 2 * h;
  for (let j = 0; j < steps; j++) {
    const k = k0 + 2 * j;
    const stages: [number, number][] = [[k, 0], [k + 1, 0.5], [k + 1, 0.5], [k + 2, 1]];
    for (let st = 0; st < 4; st++) {
      const [ks_, c] = stages[st]!;
      const prev = st === 0 ? null : ks[st - 1]!;
      for (let i = 0; i < 4; i++) y.q[i] = s.q[i]! + (prev ? c * H * prev.q[i]! : 0);
      for (let i = 0; i < 3; i++) {
        y.v[i] = s.v[i]! + (prev ? c * H * prev.v[i]! : 0);
        y.p[i] = s.p[i]! + (prev ? c * H * prev.p[i]! : 0);
      }
      sample(ks_);
      deriv(y, w, f, gravity, ks[st]!);
    }
    for (let i = 0; i < 4; i++) s.q[i] = s.q[i]! + (H / 6) * (ks[0]!.q[i]! + 2 * ks[1]!.q[i]! + 2 * ks[2]!.q[i]! + ks[3]!.q[i]!);
    for (let i = 0; i < 3; i++) {
      s.v[i] = s.v[i]! + (H / 6) * (ks[0]!.v[i]! + 2 * ks[1]!.v[i]! + 2 * ks[2]!.v[i]! + ks[3]!.v[i]!);
      s.p[i] = s.p[i]! + (H / 6) * (ks[0]!.p[i]! + 2 * ks[1]!.p[i]! + 2 * ks[2]!.p[i]! + ks[3]!.p[i]!);
    }
    quat.normalize(s.q, s.q);
    onStep?.(k + 2, s);
  }
  return s;
}
