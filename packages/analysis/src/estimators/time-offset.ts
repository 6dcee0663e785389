/**
 * Time offset and clock skew between the IMU and the odometry.
 *
 * What: time_offset_s = odometry timestamp − IMU timestamp of the same physical instant (s), per window and for the
 * run, and the clock skew (ppm) as the slope of the per-window offsets against time.
 * Method: cross-correlation of the gyro angular-rate magnitude with the odometry angular-rate magnitude (from
 * consecutive orientations); magnitudes do not depend on the unknown IMU–odometry rotation. For a trial lag τ the gyro
 * is integrated exactly over each odometry interval shifted by τ (running trapezoidal integral, evaluated between
 * samples), so both series describe the same time spans and no resampling bias depends on the sub-sample phase;
 * the normalised correlation is searched over ±maxLag on a 10 ms lattice (its even points, then the neighbours of the
 * best, as the peak is hundreds of ms wide), then on a 2.5 ms lattice within ±7.5 ms of it (climbing from the best
 * lag towards the higher neighbour while the correlation rises), and
 * refined by parabolas through three points at 2.5, 0.5 and 0.1 ms spacing (sub-sample interpolation, common
 * practice). Uncertainty: linearised delay estimation, σ² = σ_res² / Σ ȯ², counted over independent odometry
 * samples (the Cramér–Rao form for a time delay of a known waveform; S. M. Kay, "Fundamentals of Statistical Signal
 * Processing: Estimation Theory", 1993, §3.11 example — from memory). Skew: weighted least-squares line through
 * the per-window offsets, σ inflated by √(χ²/dof) when the scatter exceeds the stated sigmas.
 */
import type { ImuColumns, OdometryColumns } from '@plumbline/bundle';
import { emptySeries, type Unsupported, type WindowSeries } from './types.ts';

export interface TimeOffsetOptions {
  /** Largest |offset| searched, s (default 0.2). */
  maxLagS?: number;
  /** Window length, s (default 60); windows do not overlap so their errors are independent. */
  windowS?: number;
  /** Gyro bias removed before taking magnitudes, rad/s (default zero). */
  gyroBiasRadS?: ArrayLike<number>;
  /** A window needs at least this standard deviation of the gyro rate magnitude, rad/s (default 0.03). */
  minRateStdRadS?: number;
  /** A window needs at least this peak correlation coefficient (default 0.6). */
  minPeakCorrelation?: number;
}

export interface TimeOffsetResult {
  ok: true;
  /** Offset at tRef, s. */
  offsetS: number;
  offsetSigmaS: number;
  /** Reference time of the offset (IMU clock, epoch s): the weighted centre of the usable windows. */
  tRef: number;
  /** Clock skew d(offset)/dt in ppm, or null with the reason (fewer than 3 usable windows). */
  skewPpm: number | null;
  skewSigmaPpm: number | null;
  skewReason: string | null;
  /** Per-window offsets (s); `t` is where each window's delay information is centred (IMU clock). */
  windows: WindowSeries;
  /** Best correlation coefficient per window. */
  peakCorrelation: Float64Array;
}


/** Offset of the odometry clock against the IMU clock; see the module comment. */
export function estimateTimeOffset(imu: ImuColumns, odom: OdometryColumns, options: TimeOffsetOptions = {}): TimeOffsetResult | Unsupported {
  const maxLag = options.maxLagS ?? 0.2;
  const windowS = options.windowS ?? 60;
  if (odom.n < 10 || imu.n < 10) return { ok: false, reason: 'insufficient: too few samples' };
  const rate = odometryRate(odom);
  const bias = options.gyroBiasRadS ?? [0, 0, 0];
  const t0 = Math.max(imu.t[0]!, odom.t[0]! + maxLag), t1 = Math.min(imu.t[imu.n - 1]!, odom.t[odom.n - 1]! - maxLag);
  if (!(t1 - t0 > 5)) return { ok: false, reason: 'insufficient: IMU and odometry overlap by less than 5 s' };
  const nw = Math.max(1, Math.floor((t1 - t0) / windowS));
  const span = (t1 - t0) / nw;
  const windows = emptySeries('s', nw);
  const peak = new Float64Array(nw);
  const scratch = createScratch(imu, rate, span, maxLag);
  for (let w = 0; w < nw; w++) {
    const a = t0 + w * span;
    windows.t[w] = a + span / 2;
    const r = offsetInWindow(imu, rate, a, a + span, maxLag, scratch, bias, options);
    peak[w] = r.peak;
    if ('reason' in r) windows.reasons[w] = r.reason;
    else {
      windows.value[w] = r.offset;
      windows.sigma[w] = r.sigma;
      if (Number.isFinite(r.tEff)) windows.t[w] = r.tEff;
    }
  }
  return combineWindows(windows, peak);
}

interface OdomRate {
  /** Odometry stamps (odometry clock) and |Δθ| over each interval (rad). */
  t: Float64Array;
  angle: Float64Array;
  n: number;
  period: number;
}

/** |Δθ| of the odometry between consecutive orientations (rad), interval k = [t_k, t_k+1]. */
function odometryRate(odom: OdometryColumns): OdomRate {
  const n = odom.n - 1;
  const angle = new Float64Array(n);
  for (let k = 0; k < n; k++) {
    const w = odom.qw[k]! * odom.qw[k + 1]! + odom.qx[k]! * odom.qx[k + 1]! + odom.qy[k]! * odom.qy[k + 1]! + odom.qz[k]! * odom.qz[k + 1]!;
    angle[k] = 2 * Math.acos(Math.min(1, Math.abs(w)));
  }
  return { t: odom.t, angle, n, period: (odom.t[odom.n - 1]! - odom.t[0]!) / n };
}

interface Scratch {
  /** Trapezoidal running integral of (ω − b) over the window's IMU samples, per axis, and the sample times. */
  px: Float64Array;
  py: Float64Array;
  pz: Float64Array;
  wx: Float64Array;
  wy: Float64Array;
  wz: Float64Array;
  t: Float64Array;
  /** Gyro |∫ω| / Δt per odometry interval at the current lag; odometry |Δθ| / Δt. */
  g: Float64Array;
  o: Float64Array;
  /** Integral at each odometry stamp of the window at the current lag, and the stamp (IMU clock). */
  ex: Float64Array;
  ey: Float64Array;
  ez: Float64Array;
  et: Float64Array;
}

function createScratch(imu: ImuColumns, rate: OdomRate, span: number, maxLag: number): Scratch {
  const fs = (imu.n - 1) / (imu.t[imu.n - 1]! - imu.t[0]!);
  const ni = Math.ceil((span + 2 * maxLag + 1) * fs * 1.1) + 8;
  const no = Math.ceil((span / rate.period) * 1.2) + 8;
  const f = () => new Float64Array(ni);
  const e = () => new Float64Array(no + 1);
  return { px: f(), py: f(), pz: f(), wx: f(), wy: f(), wz: f(), t: f(), g: new Float64Array(no), o: new Float64Array(no), ex: e(), ey: e(), ez: e(), et: e() };
}

function cursorBefore(tx: Float64Array, n: number, t: number): number {
  let lo = 0, hi = n - 1;
  if (tx[0]! > t) return 0;
  while (lo < hi) {
    const mid = (lo + hi + 1) >> 1;
    if (tx[mid]! <= t) lo = mid;
    else hi = mid - 1;
  }
  return lo;
}

type WindowOffset = { offset: number; sigma: number; peak: number; tEff: number } | { reason: string; peak: number };

interface WindowData {
  s: Scratch;
  /** IMU samples in the scratch integral and odometry intervals k0..k0+m of the window. */
  ni: number;
  k0: number;
  m: number;
  rate: OdomRate;
}

/**
 * Gyro rate magnitude over every odometry interval shifted by lag τ: |∫ (ω − b) dt| / Δt over
 * [t_k − τ, t_k+1 − τ] (IMU clock), with the integral of the linearly interpolated rate (exact for the trapezoid rule),
 * so no resampling of either signal is involved. Fills s.g; O(m) per lag. With every interval in use (step 1)
 * consecutive intervals share their end points, so the running integral is evaluated once per odometry stamp.
 */
function gyroAtLag(d: WindowData, tau: number, step = 1): void {
  const { s, rate, m, k0, ni } = d;
  // The arrays go in as arguments: the hot loops then depend on no object layout, so their compiled code is not
  // thrown away when V8 generalises a field type elsewhere.
  if (step === 1) gyroAtLagAll(s.t, s.px, s.py, s.pz, s.wx, s.wy, s.wz, s.g, rate.t, k0, m, ni, tau, s.ex, s.ey, s.ez, s.et);
  else gyroAtLagStep(s.t, s.px, s.py, s.pz, s.wx, s.wy, s.wz, s.g, rate.t, k0, m, ni, tau, step);
}

// ∫ of the linearly interpolated rate from the window start to T: P_c + ω_c·u + (ω_c+1 − ω_c)·u²/(2h), with c the
// last sample at or before T (clamped to the window). Written out per axis in the two loops below.

/**
 * gyroAtLag over every interval: the end of interval j is the start of interval j + 1, so the integral is evaluated
 * once per odometry stamp into (ex, ey, ez) at times et, then differenced (two loops without loop-carried values).
 */
function gyroAtLagAll(
  st: Float64Array, px: Float64Array, py: Float64Array, pz: Float64Array, wx: Float64Array, wy: Float64Array, wz: Float64Array,
  g: Float64Array, rt: Float64Array, k0: number, m: number, ni: number, tau: number,
  ex: Float64Array, ey: Float64Array, ez: Float64Array, et: Float64Array,
): void {
  const t0w = st[0]!, inv = (ni - 1) / (st[ni - 1]! - t0w);
  for (let j = 0; j <= m; j++) {
    const T = rt[k0 + j]! - tau;
    // sampleBefore, written out
    let c = ((T - t0w) * inv) | 0;
    if (c < 0) c = 0;
    else if (c > ni - 2) c = ni - 2;
    while (c > 0 && st[c]! > T) c--;
    while (c + 2 < ni && st[c + 1]! <= T) c++;
    const h = st[c + 1]! - st[c]!, u = T - st[c]!, f = (u * u) / (2 * h);
    ex[j] = px[c]! + wx[c]! * u + (wx[c + 1]! - wx[c]!) * f;
    ey[j] = py[c]! + wy[c]! * u + (wy[c + 1]! - wy[c]!) * f;
    ez[j] = pz[c]! + wz[c]! * u + (wz[c + 1]! - wz[c]!) * f;
    et[j] = T;
  }
  for (let j = 0; j < m; j++) {
    const x = ex[j + 1]! - ex[j]!, y = ey[j + 1]! - ey[j]!, z = ez[j + 1]! - ez[j]!;
    g[j] = Math.sqrt(x * x + y * y + z * z) / (et[j + 1]! - et[j]!);
  }
}

/** gyroAtLag over every step-th interval, both ends evaluated. */
function gyroAtLagStep(
  st: Float64Array, px: Float64Array, py: Float64Array, pz: Float64Array, wx: Float64Array, wy: Float64Array, wz: Float64Array,
  g: Float64Array, rt: Float64Array, k0: number, m: number, ni: number, tau: number, step: number,
): void {
  const t0w = st[0]!, inv = (ni - 1) / (st[ni - 1]! - t0w);
  for (let j = 0; j < m; j += step) {
    const ta = rt[k0 + j]! - tau, tb = rt[k0 + j + 1]! - tau;
    const ca = sampleBefore(st, ni, t0w, inv, ta);
    const ha = st[ca + 1]! - st[ca]!, ua = ta - st[ca]!, fa = (ua * ua) / (2 * ha);
    const cb = sampleBefore(st, ni, t0w, inv, tb);
    const hb = st[cb + 1]! - st[cb]!, ub = tb - st[cb]!, fb = (ub * ub) / (2 * hb);
    const x = px[cb]! + wx[cb]! * ub + (wx[cb + 1]! - wx[cb]!) * fb - (px[ca]! + wx[ca]! * ua + (wx[ca + 1]! - wx[ca]!) * fa);
    const y = py[cb]! + wy[cb]! * ub + (wy[cb + 1]! - wy[cb]!) * fb - (py[ca]! + wy[ca]! * ua + (wy[ca + 1]! - wy[ca]!) * fa);
    const z = pz[cb]! + wz[cb]! * ub + (wz[cb + 1]! - wz[cb]!) * fb - (pz[ca]! + wz[ca]! * ua + (wz[ca + 1]! - wz[ca]!) * fa);
    g[j] = Math.sqrt(x * x + y * y + z * z) / (tb - ta);
  }
}

/**
 * Last window sample at or before T, clamped to [0, ni − 2]: guessed from the mean sample rate and corrected locally,
 * so a lag costs O(intervals), not O(samples).
 */
function sampleBefore(st: Float64Array, ni: number, t0w: number, inv: number, T: number): number {
  let c = ((T - t0w) * inv) | 0;
  if (c < 0) c = 0;
  else if (c > ni - 2) c = ni - 2;
  while (c > 0 && st[c]! > T) c--;
  while (c + 2 < ni && st[c + 1]! <= T) c++;
  return c;
}

/**
 * IMU samples covering [lo, hi] into the scratch, bias removed, with their running integral by the trapezoid rule;
 * returns the sample count. (Kept apart from the lag search so that each part is compiled on its own.)
 */
function loadWindow(imu: ImuColumns, lo: number, hi: number, s: Scratch, bias: ArrayLike<number>): number {
  const t = imu.t, gx = imu.gx, gy = imu.gy, gz = imu.gz, n = imu.n, cap = s.t.length;
  const bx = bias[0]!, by = bias[1]!, bz = bias[2]!;
  let ni = 0;
  for (let i = cursorBefore(t, n, lo); i < n && ni < cap && t[i]! <= hi; i++, ni++) {
    s.t[ni] = t[i]!;
    s.wx[ni] = gx[i]! - bx;
    s.wy[ni] = gy[i]! - by;
    s.wz[ni] = gz[i]! - bz;
    if (ni === 0) {
      s.px[0] = s.py[0] = s.pz[0] = 0;
    } else {
      const h = s.t[ni]! - s.t[ni - 1]!;
      s.px[ni] = s.px[ni - 1]! + 0.5 * (s.wx[ni]! + s.wx[ni - 1]!) * h;
      s.py[ni] = s.py[ni - 1]! + 0.5 * (s.wy[ni]! + s.wy[ni - 1]!) * h;
      s.pz[ni] = s.pz[ni - 1]! + 0.5 * (s.wz[ni]! + s.wz[ni - 1]!) * h;
    }
  }
  return ni;
}

/** Odometry rate |Δθ|/Δt of intervals k0..k0+m−1 into o; returns Σo and Σo². */
function loadOdometryRate(rate: OdomRate, k0: number, m: number, o: Float64Array): { so: number; soo: number } {
  let so = 0, soo = 0;
  for (let j = 0; j < m; j++) {
    const k = k0 + j;
    o[j] = rate.angle[k]! / (rate.t[k + 1]! - rate.t[k]!);
    so += o[j]!;
    soo += o[j]! ** 2;
  }
  return { so, soo };
}

function offsetInWindow(
  imu: ImuColumns, rate: OdomRate, a: number, b: number, maxLag: number, s: Scratch, bias: ArrayLike<number>, options: TimeOffsetOptions,
): WindowOffset {
  const ni = loadWindow(imu, a - maxLag - 0.1, b + maxLag + 0.1, s, bias);
  // Odometry intervals whose IMU-clock span at zero lag lies inside [a, b].
  let k0 = cursorBefore(rate.t, rate.n + 1, a);
  if (rate.t[k0]! < a) k0++;
  let m = 0;
  while (k0 + m < rate.n && rate.t[k0 + m + 1]! <= b && m < s.o.length) m++;
  if (ni < 4 || m < 20) return { reason: 'insufficient: too few samples in the window', peak: 0 };
  const { so, soo } = loadOdometryRate(rate, k0, m, s.o);
  const oStd = Math.sqrt(Math.max(0, soo / m - (so / m) ** 2));
  if (oStd < (options.minRateStdRadS ?? 0.03)) return { reason: 'unobservable: too little rotation to correlate', peak: 0 };
  const d: WindowData = { s, ni, k0, m, rate };
  // Correlation at lag tau over every step-th odometry interval.
  const corr = (tau: number, step = 1): number => {
    gyroAtLag(d, tau, step);
    return pearson(s.g, s.o, m, step);
  };
  // Coarse lattice (10 ms over ±maxLag) on every 4th odometry interval: its even points first, then the two
  // neighbours of the best of them; the peak is hundreds of ms wide, so this finds the lattice maximum at about half
  // the cost of every point.
  const last = Math.floor((2 * maxLag + 1e-12) / 0.01);
  const lattice = (k: number) => -maxLag + k * 0.01;
  let kBest = 0, cBest = -2;
  for (let k = 0; k <= last; k += 2) {
    const c = corr(lattice(k), 4);
    if (c > cBest) [cBest, kBest] = [c, k];
  }
  for (const k of [kBest - 1, kBest + 1]) {
    if (k < 0 || k > last) continue;
    const c = corr(lattice(k), 4);
    if (c > cBest) [cBest, kBest] = [c, k];
  }
  // Then all intervals on a 2.5-ms lattice within ±7.5 ms of the lattice maximum.
  const tau0 = lattice(kBest);
  const fine = new Float64Array(7).fill(Number.NaN);
  const at = (j: number): number => (Number.isNaN(fine[j]!) ? (fine[j] = corr(tau0 + (j - 3) * 0.0025)) : fine[j]!);
  // Climb from the centre towards the higher neighbour while the correlation rises (the peak is wide: unimodal here).
  at(3);
  let jBest = 3;
  const dir = at(2) > at(3) ? -1 : at(4) > at(3) ? 1 : 0;
  if (dir !== 0) {
    jBest += dir;
    while (jBest + dir >= 0 && jBest + dir <= 6 && at(jBest + dir) > fine[jBest]!) jBest += dir;
  }
  const best = { c: fine[jBest]!, tau: tau0 + (jBest - 3) * 0.0025 };
  if (best.c < (options.minPeakCorrelation ?? 0.6)) return { reason: 'unobservable: no distinct correlation peak', peak: best.c };
  if (Math.abs(best.tau) >= maxLag - 0.001) return { reason: 'insufficient: correlation peak at the edge of the search range', peak: best.c };
  // Parabolas through three points at shrinking spacing around the previous vertex, which removes the pull of a wide
  // parabola towards the lattice point. The first one reuses the 2.5-ms neighbours when the search has them.
  const vertex = (tau: number, c0: number, h: number, cm = corr(tau - h), cp = corr(tau + h)): number => {
    const den = cm - 2 * c0 + cp;
    return tau + (den < 0 ? Math.max(-1, Math.min(1, (0.5 * (cm - cp)) / den)) : 0) * h;
  };
  const first = jBest > 0 && jBest < 6 ? vertex(best.tau, best.c, 0.0025, fine[jBest - 1], fine[jBest + 1]) : vertex(best.tau, best.c, 0.0025);
  const second = vertex(first, corr(first), 0.0005);
  const offset = vertex(second, corr(second), 0.0001);
  const { sigma, tEff } = delaySigma(d, offset);
  return { offset, sigma, peak: best.c, tEff };
}

/** Pearson correlation of x and y over indices 0, step, 2·step, … < m. */
function pearson(x: Float64Array, y: Float64Array, m: number, step = 1): number {
  let sx = 0, sy = 0, sxx = 0, syy = 0, sxy = 0, cnt = 0;
  for (let i = 0; i < m; i += step, cnt++) {
    const a = x[i]!, b = y[i]!;
    sx += a;
    sy += b;
    sxx += a * a;
    syy += b * b;
    sxy += a * b;
  }
  const vx = sxx - (sx * sx) / cnt, vy = syy - (sy * sy) / cnt;
  return vx > 0 && vy > 0 ? (sxy - (sx * sy) / cnt) / Math.sqrt(vx * vy) : -1;
}

/**
 * σ of the delay: residual of o ≈ α·g(τ̂) + β over α²·Σ ġ², one independent sample per odometry interval; and the
 * time the window's delay information is centred on (intervals weighted by ġ²), which is where a drifting offset is
 * actually measured — the window centre would shrink the skew when motion fills the window unevenly.
 */
function delaySigma(d: WindowData, tau: number): { sigma: number; tEff: number } {
  const { s, m } = d;
  const h = 0.002;
  gyroAtLag(d, tau + h);
  const gp = s.g.slice(0, m);
  gyroAtLag(d, tau - h);
  const gm = s.g.slice(0, m);
  gyroAtLag(d, tau);
  let sg = 0, so = 0, sgg = 0, sgo = 0;
  for (let j = 0; j < m; j++) {
    sg += s.g[j]!;
    so += s.o[j]!;
    sgg += s.g[j]! ** 2;
    sgo += s.g[j]! * s.o[j]!;
  }
  const alpha = (sgo - (sg * so) / m) / (sgg - (sg * sg) / m);
  const beta = (so - alpha * sg) / m;
  let res = 0, slope = 0, st = 0;
  for (let j = 0; j < m; j++) {
    res += (s.o[j]! - alpha * s.g[j]! - beta) ** 2;
    const w = (alpha * (gp[j]! - gm[j]!) / (2 * h)) ** 2;
    slope += w;
    const k = d.k0 + j;
    st += w * 0.5 * (d.rate.t[k]! + d.rate.t[k + 1]! - 2 * tau);
  }
  return { sigma: Math.sqrt(res / Math.max(1, m - 2) / slope), tEff: slope > 0 ? st / slope : Number.NaN };
}

function combineWindows(windows: WindowSeries, peak: Float64Array): TimeOffsetResult | Unsupported {
  let sw = 0, st = 0, sy = 0, stt = 0, sty = 0, m = 0;
  for (let w = 0; w < windows.t.length; w++) {
    const y = windows.value[w]!;
    if (!Number.isFinite(y)) continue;
    const wt = 1 / windows.sigma[w]! ** 2, t = windows.t[w]!;
    sw += wt;
    st += wt * t;
    sy += wt * y;
    m++;
  }
  if (m === 0) return { ok: false, reason: windows.reasons.find((r) => r !== '') ?? 'unobservable: no usable window' };
  const tRef = st / sw;
  for (let w = 0; w < windows.t.length; w++) {
    const y = windows.value[w]!;
    if (!Number.isFinite(y)) continue;
    const wt = 1 / windows.sigma[w]! ** 2, dt = windows.t[w]! - tRef;
    stt += wt * dt * dt;
    sty += wt * dt * y;
  }
  const mean = sy / sw;
  const slope = m >= 3 && stt > 0 ? sty / stt : 0;
  let chi2 = 0;
  for (let w = 0; w < windows.t.length; w++) {
    const y = windows.value[w]!;
    if (!Number.isFinite(y)) continue;
    chi2 += (y - mean - slope * (windows.t[w]! - tRef)) ** 2 / windows.sigma[w]! ** 2;
  }
  const dof = m - (m >= 3 ? 2 : 1);
  const inflate = dof > 0 ? Math.sqrt(Math.max(1, chi2 / dof)) : 1;
  const base = { ok: true as const, offsetS: mean, offsetSigmaS: inflate / Math.sqrt(sw), tRef, windows, peakCorrelation: peak };
  if (m < 3) return { ...base, skewPpm: null, skewSigmaPpm: null, skewReason: 'insufficient: fewer than 3 usable windows' };
  return { ...base, skewPpm: slope * 1e6, skewSigmaPpm: (inflate / Math.sqrt(stt)) * 1e6, skewReason: null };
}
