/**
 * Gyro bias and the IMU–odometry extrinsic rotation from relative rotations.
 *
 * What: X = R_IB (rotation of the odometry body frame into the IMU frame, as `imu_T_odom` in the manifest) and the gyro
 * bias b (rad/s, IMU frame), such that the gyro-integrated rotation over an interval equals the odometry's relative
 * rotation seen in the IMU frame: ΔR_k(b) = X A_k Xᵀ with A_k = R_WB(t_k)ᵀ R_WB(t_k+1). This is the rotation part
 * of the hand–eye problem AX = XB on SO(3).
 * Method: initial X by the linear quaternion formulation (q_C ⊗ q_X − q_X ⊗ q_A = 0 stacked over intervals, solution
 * = eigenvector of the smallest eigenvalue; the rotation part of K. Daniilidis, "Hand-Eye Calibration Using Dual
 * Quaternions", IJRR 18(3), 1999; equivalent in the noise-free case to F. Park & B. Martin, IEEE T-RA 10(5), 1994).
 * Then Gauss–Newton on (δθ_X, δb) with residual r_k = Log(Exp(J_k b)ᵀ ΔR_kᵀ X A_k Xᵀ), Jacobians X(A_kᵀ − I) and −J_k
 * (J_k = ∂ΔR/∂bg of the preintegration, Forster et al. 2017), Huber weights (k = 1.345 σ, P. Huber 1964) with σ from
 * the MAD of the residuals. Covariance = (JᵀWJ)⁻¹·σ̂². Intervals are composed from the keyframe intervals of the
 * preintegration batch to about `spanS` seconds each, so that rotation signal dominates odometry orientation noise.
 */
import { quat } from '@plumbline/geometry';
import { solveSpd, symmetricEigen, medianOf } from './small-math.ts';
import type { PreintegrationBatch } from './preintegration-batch.ts';
import { emptySeries, type Unsupported, type WindowSeries } from './types.ts';

export interface KeyframeOrientations {
  /** Orientations R_WB of the odometry body at the batch's keyframes, quaternions w-first, stride 4 (n + 1 entries). */
  q: Float64Array;
}

export interface RotationOptions {
  /** Target length of the composed intervals, s (default 1). */
  spanS?: number;
  /** Window for the rotation residual series, s (default 10), and overlap fraction (default 0.5). */
  windowS?: number;
  windowOverlap?: number;
  /** Gauss–Newton iterations (default 8). */
  iterations?: number;
}

export interface RotationResult {
  ok: true;
  /** Estimated R_IB, quaternion w-first. */
  imuQOdom: Float64Array;
  /** Gyro bias, rad/s, IMU frame (absolute, i.e. the batch's linearisation bias plus the correction). */
  gyroBiasRadS: Float64Array;
  gyroBiasSigmaRadS: Float64Array;
  /** 1-sigma of the extrinsic rotation about the axes of the right perturbation X·Exp(δθ) (odometry body axes), rad. */
  rotationSigmaRad: Float64Array;
  /** 3×3 covariance of the right perturbation X·Exp(δθ), rad². */
  rotationCov: Float64Array;
  /** Smallest / largest eigenvalue of the information on δθ_X: near 0 when the motion turns about one axis only. */
  observability: number;
  /** Robust σ of a residual component, rad. */
  residualSigmaRad: number;
  /** Composed intervals used. */
  intervals: number;
  /** RMS rotation residual per window, deg/s. */
  residualWindows: WindowSeries;
}

interface Composite {
  n: number;
  t0: Float64Array;
  t1: Float64Array;
  c: Float64Array; // gyro ΔR quats
  a: Float64Array; // odometry relative quats
  j: Float64Array; // 3×3 bias Jacobians
}

/** Composes consecutive valid keyframe intervals into spans of about spanS seconds. R = R1 R2, J = R2ᵀ J1 + J2. */
function compose(batch: PreintegrationBatch, kf: KeyframeOrientations, spanS: number): Composite {
  const cap = batch.n;
  const out: Composite = { n: 0, t0: new Float64Array(cap), t1: new Float64Array(cap), c: new Float64Array(4 * cap), a: new Float64Array(4 * cap), j: new Float64Array(9 * cap) };
  const c = quat.create(), q = quat.create(), m = new Float64Array(9), J = new Float64Array(9), tmp = new Float64Array(9);
  let start = -1;
  for (let k = 0; k <= batch.n; k++) {
    const valid = k < batch.n && batch.valid[k] === 1;
    if (valid && start < 0) {
      start = k;
      quat.identity(c);
      J.fill(0);
    }
    if (!valid) {
      start = -1;
      continue;
    }
    q.set(batch.dq.subarray(4 * k, 4 * k + 4));
    quat.toMat3(m, q);
    // J ← R2ᵀ J + J2 with R2 = this interval's ΔR.
    for (let r = 0; r < 3; r++)
      for (let col = 0; col < 3; col++)
        tmp[r * 3 + col] = m[r]! * J[col]! + m[3 + r]! * J[3 + col]! + m[6 + r]! * J[6 + col]! + batch.dRdBg[9 * k + r * 3 + col]!;
    J.set(tmp);
    quat.multiply(c, c, q);
    if (batch.tEnd[k]! - batch.tStart[start]! >= spanS - 1e-9) {
      const i = out.n++;
      out.t0[i] = batch.tStart[start]!;
      out.t1[i] = batch.tEnd[k]!;
      out.c.set(c, 4 * i);
      out.j.set(J, 9 * i);
      relative(out.a, 4 * i, kf.q, start, k + 1);
      start = -1;
    }
  }
  return out;
}

/** out[o..o+4) = q_aᵀ ⊗ q_b for keyframe quaternions a, b. */
function relative(out: Float64Array, o: number, q: Float64Array, a: number, b: number): void {
  const aw = q[4 * a]!, ax = -q[4 * a + 1]!, ay = -q[4 * a + 2]!, az = -q[4 * a + 3]!;
  const bw = q[4 * b]!, bx = q[4 * b + 1]!, by = q[4 * b + 2]!, bz = q[4 * b + 3]!;
  out[o] = aw * bw - ax * bx - ay * by - az * bz;
  out[o + 1] = aw * bx + ax * bw + ay * bz - az * by;
  out[o + 2] = aw * by - ax * bz + ay * bw + az * bx;
  out[o + 3] = aw * bz + ax * by - ay * bx + az * bw;
}

/** Linear quaternion hand–eye: X with C X = X A; null when the rotations do not constrain it (single axis). */
export function handEyeRotation(c: Float64Array, a: Float64Array, n: number): Float64Array | null {
  const M = new Float64Array(16);
  const row = new Float64Array(16);
  for (let i = 0; i < n; i++) {
    let cw = c[4 * i]!, cx = c[4 * i + 1]!, cy = c[4 * i + 2]!, cz = c[4 * i + 3]!;
    let aw = a[4 * i]!, ax = a[4 * i + 1]!, ay = a[4 * i + 2]!, az = a[4 * i + 3]!;
    if (cw < 0) [cw, cx, cy, cz] = [-cw, -cx, -cy, -cz];
    if (aw < 0) [aw, ax, ay, az] = [-aw, -ax, -ay, -az];
    // L(c) − R(a), 4×4 row-major: q_c ⊗ x − x ⊗ q_a.
    row.set([
      cw - aw, -cx + ax, -cy + ay, -cz + az,
      cx - ax, cw - aw, -cz - az, cy + ay,
      cy - ay, cz + az, cw - aw, -cx - ax,
      cz - az, -cy - ay, cx + ax, cw - aw,
    ]);
    for (let r = 0; r < 4; r++)
      for (let s = 0; s < 4; s++) {
        let v = 0;
        for (let k = 0; k < 4; k++) v += row[k * 4 + r]! * row[k * 4 + s]!;
        M[r * 4 + s] = M[r * 4 + s]! + v;
      }
  }
  const { values, vectors } = symmetricEigen(M, 4);
  if (!(values[1]! > 100 * Math.max(values[0]!, 1e-300))) return null;
  const x = Float64Array.of(vectors[0]!, vectors[4]!, vectors[8]!, vectors[12]!);
  return quat.normalize(x, x);
}

/**
 * Estimates X = R_IB and the gyro bias; see the module comment. `prior` is the manifest's R_IB (w-first), used as the
 * starting point when the closed form is not determined.
 */
export function estimateRotation(
  batch: PreintegrationBatch, kf: KeyframeOrientations, prior: Float64Array, options: RotationOptions = {},
): RotationResult | Unsupported {
  const comp = compose(batch, kf, options.spanS ?? 1);
  if (comp.n < 10) return { ok: false, reason: 'insufficient: fewer than 10 gyro/odometry rotation intervals' };
  const x = handEyeRotation(comp.c, comp.a, comp.n) ?? quat.normalize(quat.create(), prior);
  // The hand–eye sign is free; keep the quaternion near the prior.
  if (x[0]! * prior[0]! + x[1]! * prior[1]! + x[2]! * prior[2]! + x[3]! * prior[3]! < 0) for (let i = 0; i < 4; i++) x[i] = -x[i]!;
  const db = new Float64Array(3);
  const res = new Float64Array(3 * comp.n);
  const am = odometryMatrices(comp);
  let H: Float64Array = new Float64Array(36);
  let sigma = 0;
  for (let it = 0; it < (options.iterations ?? 8); it++) {
    residuals(comp, x, db, res);
    sigma = robustSigma(res, comp.n);
    const g = new Float64Array(6);
    H = normalEquations(comp, am, x, res, sigma, g);
    const sol = solveSpd(H, g, 6);
    if (sol === null) return { ok: false, reason: 'unobservable: gyro bias and extrinsic rotation not separable on this motion' };
    const d = sol.x;
    const dq = quat.fromRotationVector(quat.create(), d[0]!, d[1]!, d[2]!);
    quat.multiply(x, x, dq);
    quat.normalize(x, x);
    db[0] = db[0]! + d[3]!;
    db[1] = db[1]! + d[4]!;
    db[2] = db[2]! + d[5]!;
    if (Math.hypot(d[0]!, d[1]!, d[2]!) < 1e-9 && Math.hypot(d[3]!, d[4]!, d[5]!) < 1e-10) break;
  }
  residuals(comp, x, db, res);
  sigma = robustSigma(res, comp.n);
  H = normalEquations(comp, am, x, res, sigma, new Float64Array(6));
  const inv = solveSpd(H, new Float64Array(6), 6);
  if (inv === null) return { ok: false, reason: 'unobservable: gyro bias and extrinsic rotation not separable on this motion' };
  const cov = inv.inv.map((v) => v * sigma * sigma);
  const hx = Float64Array.of(H[0]!, H[1]!, H[2]!, H[6]!, H[7]!, H[8]!, H[12]!, H[13]!, H[14]!);
  const ev = symmetricEigen(hx, 3).values;
  const sd = (i: number) => Math.sqrt(Math.max(0, cov[i * 6 + i]!));
  return {
    ok: true,
    imuQOdom: x,
    gyroBiasRadS: Float64Array.of(batch.bg[0]! + db[0]!, batch.bg[1]! + db[1]!, batch.bg[2]! + db[2]!),
    gyroBiasSigmaRadS: Float64Array.of(sd(3), sd(4), sd(5)),
    rotationSigmaRad: Float64Array.of(sd(0), sd(1), sd(2)),
    rotationCov: Float64Array.of(cov[0]!, cov[1]!, cov[2]!, cov[6]!, cov[7]!, cov[8]!, cov[12]!, cov[13]!, cov[14]!),
    observability: ev[2]! > 0 ? ev[0]! / ev[2]! : 0,
    residualSigmaRad: sigma,
    intervals: comp.n,
    residualWindows: residualSeries(comp, res, options.windowS ?? 10, options.windowOverlap ?? 0.5),
  };
}

const qa = quat.create(), qb = quat.create(), qc = quat.create(), qe = quat.create();
const rv = new Float64Array(3);

/** r_k = Log(Exp(J_k δb)ᵀ C_kᵀ X A_k Xᵀ), rad, stride 3. */
function residuals(comp: Composite, x: Float64Array, db: Float64Array, out: Float64Array): void {
  const xc = quat.conjugate(quat.create(), x);
  const J = comp.j, c = comp.c, a = comp.a;
  for (let k = 0; k < comp.n; k++) {
    const o = 9 * k, q = 4 * k;
    quat.fromRotationVector(qe,
      -(J[o]! * db[0]! + J[o + 1]! * db[1]! + J[o + 2]! * db[2]!),
      -(J[o + 3]! * db[0]! + J[o + 4]! * db[1]! + J[o + 5]! * db[2]!),
      -(J[o + 6]! * db[0]! + J[o + 7]! * db[1]! + J[o + 8]! * db[2]!));
    quat.set(qc, c[q]!, -c[q + 1]!, -c[q + 2]!, -c[q + 3]!);
    quat.set(qa, a[q]!, a[q + 1]!, a[q + 2]!, a[q + 3]!);
    quat.multiply(qb, x, qa);
    quat.multiply(qb, qb, xc);
    quat.multiply(qb, qc, qb);
    quat.multiply(qb, qe, qb);
    quat.toRotationVector(rv, qb);
    out[3 * k] = rv[0]!;
    out[3 * k + 1] = rv[1]!;
    out[3 * k + 2] = rv[2]!;
  }
}

function robustSigma(res: Float64Array, n: number): number {
  const mags = new Float64Array(n);
  // sqrt of the sum rather than Math.hypot (several times slower in V8; residuals never approach overflow)
  for (let k = 0; k < n; k++) mags[k] = Math.sqrt(res[3 * k]! ** 2 + res[3 * k + 1]! ** 2 + res[3 * k + 2]! ** 2);
  // For a 3-D isotropic normal, median |r| ≈ 1.538 σ (chi distribution with 3 dof, median √2.366).
  return Math.max(medianOf(mags) / 1.538, 1e-9);
}

/** Odometry relative rotations A_k as row-major matrices, stride 9 (fixed across the iterations). */
function odometryMatrices(comp: Composite): Float64Array {
  const out = new Float64Array(9 * comp.n), m = new Float64Array(9);
  for (let k = 0; k < comp.n; k++) {
    quat.set(qa, comp.a[4 * k]!, comp.a[4 * k + 1]!, comp.a[4 * k + 2]!, comp.a[4 * k + 3]!);
    out.set(quat.toMat3(m, qa), 9 * k);
  }
  return out;
}

/**
 * Accumulates JᵀWJ (returned) and −JᵀWr (into g) with Huber weights. `am` = odometryMatrices(comp). Row block k is
 * 3×6: [X(A_kᵀ − I) | −J_k]; only the upper triangle of JᵀWJ is summed (the lower one is its mirror).
 */
function normalEquations(comp: Composite, am: Float64Array, x: Float64Array, res: Float64Array, sigma: number, g: Float64Array): Float64Array {
  const H = new Float64Array(36);
  const X = quat.toMat3(new Float64Array(9), x), Jr = new Float64Array(18);
  const kH = 1.345 * sigma * Math.sqrt(3);
  for (let k = 0; k < comp.n; k++) {
    const o = 9 * k;
    for (let r = 0; r < 3; r++) {
      const x0 = X[r * 3]!, x1 = X[r * 3 + 1]!, x2 = X[r * 3 + 2]!;
      for (let c = 0; c < 3; c++) {
        // Σ_m X[r][m]·(A[c][m] − δ_cm), summed in m order
        let v = 0;
        v += x0 * (am[o + c * 3]! - (c === 0 ? 1 : 0));
        v += x1 * (am[o + c * 3 + 1]! - (c === 1 ? 1 : 0));
        v += x2 * (am[o + c * 3 + 2]! - (c === 2 ? 1 : 0));
        Jr[r * 6 + c] = v;
        Jr[r * 6 + 3 + c] = -comp.j[o + r * 3 + c]!;
      }
    }
    const r0 = res[3 * k]!, r1 = res[3 * k + 1]!, r2 = res[3 * k + 2]!;
    const mag = Math.sqrt(r0 * r0 + r1 * r1 + r2 * r2);
    const w = mag <= kH ? 1 : kH / mag;
    for (let a = 0; a < 6; a++) {
      const ja0 = Jr[a]!, ja1 = Jr[6 + a]!, ja2 = Jr[12 + a]!;
      for (let b = a; b < 6; b++) H[a * 6 + b] = H[a * 6 + b]! + w * (ja0 * Jr[b]! + ja1 * Jr[6 + b]! + ja2 * Jr[12 + b]!);
      g[a] = g[a]! - w * (ja0 * r0 + ja1 * r1 + ja2 * r2);
    }
  }
  for (let a = 0; a < 6; a++) for (let b = 0; b < a; b++) H[a * 6 + b] = H[b * 6 + a]!;
  return H;
}

function residualSeries(comp: Composite, res: Float64Array, windowS: number, overlap: number): WindowSeries {
  const t0 = comp.t0[0]!, t1 = comp.t1[comp.n - 1]!;
  const hop = windowS * (1 - overlap);
  const nw = Math.max(1, Math.floor((t1 - t0 - windowS) / hop) + 1);
  const s = emptySeries('deg/s', nw);
  let k0 = 0;
  for (let w = 0; w < nw; w++) {
    const a = t0 + w * hop, b = a + windowS;
    s.t[w] = a + windowS / 2;
    while (k0 < comp.n && comp.t0[k0]! < a) k0++;
    let sum = 0, m = 0;
    for (let k = k0; k < comp.n && comp.t1[k]! <= b; k++) {
      const dt = comp.t1[k]! - comp.t0[k]!;
      sum += (res[3 * k]! ** 2 + res[3 * k + 1]! ** 2 + res[3 * k + 2]! ** 2) / (dt * dt);
      m++;
    }
    if (m >= 3) s.value[w] = (Math.sqrt(sum / m) * 180) / Math.PI;
    else s.reasons[w] = 'insufficient: fewer than 3 intervals in the window';
  }
  return s;
}
