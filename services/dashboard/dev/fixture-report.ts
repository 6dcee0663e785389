import { REPORT_SCHEMA, type Flag, type Loop, type Path, type Report, type Series, type Severity } from '@plumbline/contracts';

/**
 * A schema-valid report for building and testing the dashboard without the analysis pipeline: a robot drives
 * serpentine laps through warehouse aisles (or a larger outdoor yard loop) back to its dock; odometry picks up a
 * scale drift inside one stretch, a heading creep, and one false loop closure. Values are plausible, not analysed.
 */
export interface FixtureOptions {
  robotId: string;
  runId: string;
  site: 'harbourside-depot' | 'northgate-yard';
  startedAt: string;
  durationS: number;
  seed: number;
  /** 'clean' gives a sound run; 'scale' and 'offset' inject the matching findings. */
  fault: 'clean' | 'scale' | 'offset';
}

function rng(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

function gauss(r: () => number): number {
  return Math.sqrt(-2 * Math.log(r() + 1e-12)) * Math.cos(2 * Math.PI * r());
}

function lapWaypoints(site: FixtureOptions['site']): [number, number][] {
  const pts: [number, number][] = [[0, 0]];
  const aisles = site === 'northgate-yard' ? 4 : 6;
  const len = site === 'northgate-yard' ? 80 : 30;
  const pitch = site === 'northgate-yard' ? 25 : 10;
  for (let i = 0; i < aisles; i++) {
    const x = i * pitch;
    pts.push(i % 2 === 0 ? [x, len] : [x, 0]);
    if (i + 1 < aisles) pts.push(i % 2 === 0 ? [x + pitch, len] : [x + pitch, 0]);
  }
  const xEnd = (aisles - 1) * pitch;
  pts.push([xEnd, -6], [0, -6], [0, 0]);
  return pts;
}

/** Position along the closed polyline at arc length `s` (wraps around). */
function along(pts: [number, number][], lapLen: number, s: number, out: [number, number]): [number, number] {
  let rem = ((s % lapLen) + lapLen) % lapLen;
  for (let i = 1; i < pts.length; i++) {
    const a = pts[i - 1]!;
    const b = pts[i]!;
    const seg = Math.hypot(b[0] - a[0], b[1] - a[1]);
    if (rem <= seg) {
      const f = seg > 0 ? rem / seg : 0;
      out[0] = a[0] + f * (b[0] - a[0]);
      out[1] = a[1] + f * (b[1] - a[1]);
      return out;
    }
    rem -= seg;
  }
  out[0] = pts[0]![0];
  out[1] = pts[0]![1];
  return out;
}

function polyLength(pts: [number, number][]): number {
  let L = 0;
  for (let i = 1; i < pts.length; i++) L += Math.hypot(pts[i]![0] - pts[i - 1]![0], pts[i]![1] - pts[i - 1]![1]);
  return L;
}

function windowSeries(unit: string, duration: number, stepS: number, f: (t: number) => [number | null, number | null]): Series {
  const t: number[] = [];
  const v: (number | null)[] = [];
  const sigma: (number | null)[] = [];
  for (let tt = stepS / 2; tt < duration; tt += stepS) {
    const [val, sg] = f(tt);
    t.push(Number(tt.toFixed(2)));
    v.push(val === null ? null : Number(val.toFixed(5)));
    sigma.push(sg === null ? null : Number(sg.toFixed(5)));
  }
  return { unit, t, v, sigma };
}

interface Tracks {
  truth: Path;
  odom: Path;
  repaired: Path;
  dist: number[];
}

function tracks(o: FixtureOptions, r: () => number, speed: number, inFault: (t: number) => number): Tracks {
  const pts = lapWaypoints(o.site);
  const lapLen = polyLength(pts);
  const n = Math.min(4000, Math.max(400, Math.round(o.durationS / 2)));
  const mk = (frame: string): Path => ({ frame, t: [], x: [], y: [], z: [] });
  const truth = mk('enu');
  const odom = mk('odometry-world');
  const repaired = mk('odometry-world');
  const dist: number[] = [];
  const p: [number, number] = [0, 0];
  let ox = 0;
  let oy = 0;
  let px = 0;
  let py = 0;
  let d = 0;
  for (let i = 0; i < n; i++) {
    const t = (o.durationS * i) / (n - 1);
    along(pts, lapLen, speed * t, p);
    const dx = p[0] - px;
    const dy = p[1] - py;
    px = p[0];
    py = p[1];
    const step = Math.hypot(dx, dy);
    d += step;
    const yaw = 0.00004 * t; // heading creep, rad
    const s = 1 + 0.004 * Math.sin(t / 900) + inFault(t);
    ox += s * (Math.cos(yaw) * dx - Math.sin(yaw) * dy);
    oy += s * (Math.sin(yaw) * dx + Math.cos(yaw) * dy);
    const rt = Number(t.toFixed(2));
    truth.t.push(rt), truth.x.push(p[0]), truth.y.push(p[1]), truth.z.push(0);
    odom.t.push(rt), odom.x.push(Number(ox.toFixed(3))), odom.y.push(Number(oy.toFixed(3))), odom.z.push(0);
    repaired.t.push(rt);
    repaired.x.push(Number((p[0] + 0.05 * gauss(r)).toFixed(3)));
    repaired.y.push(Number((p[1] + 0.05 * gauss(r)).toFixed(3)));
    repaired.z.push(0);
    dist.push(d);
  }
  return { truth, odom, repaired, dist };
}

function distanceAt(tr: Tracks, t: number): number {
  const ts = tr.odom.t;
  let i = 0;
  while (i < ts.length - 1 && ts[i + 1]! <= t) i++;
  return Number((tr.dist[i] ?? 0).toFixed(1));
}

function makeFlag(tr: Tracks, kind: Flag['kind'], n: number, severity: Severity, t0: number, t1: number, rest: Pick<Flag, 'value' | 'threshold' | 'unit' | 'message' | 'check'>): Flag {
  return { id: `${kind}-${n}`, kind, severity, t_start: t0, t_end: t1, distance_start_m: distanceAt(tr, t0), distance_end_m: distanceAt(tr, t1), ...rest };
}

export function buildFixtureReport(o: FixtureOptions): Report {
  const r = rng(o.seed);
  const speed = 1.1;
  const fa = o.durationS * 0.42;
  const fb = o.durationS * 0.42 + Math.min(600, o.durationS * 0.08);
  const inScale = (t: number): number => (o.fault === 'scale' && t > fa && t < fb ? 0.06 * Math.sin((Math.PI * (t - fa)) / (fb - fa)) : 0);
  const tr = tracks(o, r, speed, inScale);
  const duration = o.durationS;
  const step = Math.max(20, duration / 600);
  const outdoor = o.site === 'northgate-yard';

  const flags: Flag[] = [];
  if (o.fault === 'scale') {
    flags.push(makeFlag(tr, 'scale-drift', 1, 'critical', Math.round(fa), Math.round(fb), {
      value: 6.1, threshold: 2, unit: '%',
      message: 'Map distances in this stretch are about 6 % too long; shelves will not line up with earlier laps.',
      check: 'Look for motion blur or low texture in this aisle; check the camera exposure settings.',
    }));
  }
  if (o.fault === 'offset') {
    flags.push(makeFlag(tr, 'time-offset', 1, 'warn', Math.round(duration * 0.2), Math.round(duration * 0.35), {
      value: 38, threshold: 20, unit: 'ms',
      message: 'Odometry lags the IMU by about 38 ms here; turns are smeared in the map.',
      check: 'Check the camera–IMU time synchronisation (clock source and driver timestamps).',
    }));
  }
  const loopTimes: number[] = [];
  const lapS = polyLength(lapWaypoints(o.site)) / speed;
  for (let t = lapS; t < duration; t += lapS) loopTimes.push(t);
  const loops: Loop[] = loopTimes.slice(0, 12).map((t, i) => {
    const pathLen = distanceAt(tr, t);
    const err = 0.004 * pathLen * (1 + 0.3 * r());
    return {
      id: `loop-${i + 1}`, source: 'dock', t_a: 0, t_b: Number(t.toFixed(1)), path_length_m: pathLen,
      translation_error_m: Number(err.toFixed(3)), translation_error_pct: Number(((100 * err) / Math.max(pathLen, 1)).toFixed(3)),
      rotation_error_deg: 0.4, rotation_error_deg_per_m: Number((0.4 / Math.max(pathLen, 1)).toFixed(5)),
      chi2: Number((2 + 3 * r()).toFixed(2)), dof: 6, chi2_threshold: 12.592, accepted: true,
    };
  });
  if (o.fault !== 'clean' && duration > 600) {
    const ta = duration * 0.15;
    const tb = duration * 0.68;
    loops.push({
      id: `loop-${loops.length + 1}`, source: 'robot', t_a: Number(ta.toFixed(1)), t_b: Number(tb.toFixed(1)),
      path_length_m: distanceAt(tr, tb) - distanceAt(tr, ta), translation_error_m: 9.4, translation_error_pct: 3.1,
      rotation_error_deg: 14, rotation_error_deg_per_m: 0.05, chi2: 212.4, dof: 6, chi2_threshold: 12.592, accepted: false,
    });
    flags.push(makeFlag(tr, 'loop-mismatch', 1, 'warn', Number(tb.toFixed(1)), Number((tb + 1).toFixed(1)), {
      value: 212.4, threshold: 12.592, unit: 'χ²',
      message: 'A loop closure joins two places that are 9 m apart; it was left out of the repaired map.',
      check: 'Two aisles look alike to the place recogniser; consider a marker at the aisle ends.',
    }));
  }
  flags.sort((a, b) => a.t_start - b.t_start);

  const inOffset = (t: number): boolean => o.fault === 'offset' && t > duration * 0.2 && t < duration * 0.35;
  const series: Report['series'] = {
    trajectory: tr.odom,
    repaired_trajectory: tr.repaired,
    gnss_fixes: null,
    scale: windowSeries('', duration, step, (t) => [1 + 0.004 * Math.sin(t / 900) + inScale(t) + 0.003 * gauss(r), 0.004]),
    gravity_tilt_deg: windowSeries('deg', duration, step, () => [0.35 + 0.08 * gauss(r), 0.1]),
    rotation_residual_deg_s: windowSeries('deg/s', duration, step, (t) => [0.15 + 0.05 * Math.abs(gauss(r)) + (inOffset(t) ? 0.9 : 0), null]),
    time_offset_ms: windowSeries('ms', duration, step, (t) => [(inOffset(t) ? 38 : 6) + 1.5 * gauss(r), 2.5]),
    imu_gyro_z_rad_s: windowSeries('rad/s', duration, Math.max(2, duration / 3000), () => [0.25 * gauss(r), null]),
  };
  if (outdoor) {
    const g = { frame: 'enu', t: [] as number[], x: [] as number[], y: [] as number[], z: [] as number[], fix: [] as number[] };
    for (let i = 0; i < tr.truth.t.length; i += 8) {
      const fix = r() < 0.1 ? 2 : 4;
      const sd = fix === 4 ? 0.03 : 0.8;
      g.t.push(tr.truth.t[i]!), g.x.push(Number((tr.truth.x[i]! + sd * gauss(r)).toFixed(3)));
      g.y.push(Number((tr.truth.y[i]! + sd * gauss(r)).toFixed(3))), g.z.push(0), g.fix.push(fix);
    }
    series.gnss_fixes = g;
    series.gnss_error_m = windowSeries('m', duration, step, (t) => [0.3 + 0.01 * t ** 0.5 + 0.1 * Math.abs(gauss(r)), 0.05]);
  }
  return assembleReport(o, tr, flags, loops, series);
}

function est(value: number, sigma: number | null, unit: string): { value: number; sigma: number | null; unit: string } {
  return { value, sigma, unit };
}

function assembleReport(o: FixtureOptions, tr: Tracks, flags: Flag[], loops: Loop[], series: Report['series']): Report {
  const worst = flags.some((f) => f.severity === 'critical') ? 'critical' : flags.some((f) => f.severity === 'warn') ? 'warn' : null;
  const verdict = worst === 'critical' ? 'unfit' : worst === 'warn' ? 'doubtful' : 'sound';
  const score = verdict === 'unfit' ? 38 : verdict === 'doubtful' ? 71 : 94;
  const distance = tr.dist[tr.dist.length - 1] ?? 0;
  const noGnss = { value: null, sigma: null, unit: 'm', reason: 'no GNSS in this bundle' } as const;
  const stream = (file: string, rate: number) => ({
    file, samples: Math.round(rate * o.durationS), bad_lines: 0, nominal_rate_hz: rate, measured_rate_hz: rate,
    t_first: 0, t_last: o.durationS, gaps: [], duplicate_timestamps: 0, non_monotonic_timestamps: 0, non_finite_values: 0,
  });
  return {
    schema: REPORT_SCHEMA,
    analysis_version: 'fixture',
    policy_hash: 'fixture',
    run: { robot_id: o.robotId, run_id: o.runId, site: o.site, started_at: o.startedAt, t0: Date.parse(o.startedAt) / 1000, duration_s: o.durationS, distance_m: Number(distance.toFixed(1)) },
    score,
    verdict,
    estimates: {
      time_offset_s: est(o.fault === 'offset' ? 0.031 : 0.006, 0.0015, 's'),
      clock_skew_ppm: est(4.2, 1.1, 'ppm'),
      extrinsic_rotation_error_deg: est(0.6, 0.2, 'deg'),
      gyro_bias_rad_s: { value: [0.0012, -0.0008, 0.0021], sigma: [0.0002, 0.0002, 0.0003], unit: 'rad/s' },
      accel_bias_m_s2: { value: null, sigma: null, unit: 'm/s²', reason: 'robot drives on a flat floor; tilt excitation too small' },
      gravity_tilt_deg: est(0.35, 0.1, 'deg'),
      gravity_magnitude_m_s2: est(9.806, 0.004, 'm/s²'),
      scale: est(o.fault === 'scale' ? 1.021 : 1.003, 0.004, ''),
      scale_drift_pct_per_100m: o.durationS > 300 ? est(o.fault === 'scale' ? 1.8 : 0.1, 0.3, '%/100 m') : { value: null, sigma: null, unit: '%/100 m', reason: 'run shorter than 100 m' },
      gyro_noise_density: est(0.0002, null, 'rad/s/√Hz'),
      accel_noise_density: est(0.0018, null, 'm/s²/√Hz'),
      gnss_rmse_m: series.gnss_fixes ? est(0.42, 0.05, 'm') : noGnss,
      loop_drift_pct: est(0.45, 0.08, '%'),
      loop_drift_deg_per_m: est(0.002, 0.0005, 'deg/m'),
    },
    integrity: {
      imu: stream('imu.csv', 200), odometry: stream('odometry.csv', 30),
      gnss: series.gnss_fixes ? stream('gnss.nmea', 1) : null, loops: stream('loops.csv', 0.01),
      saturation: [], stationary: [{ t_start: 0, t_end: 4 }], units: { accel_rest_ratio: 1.0, gyro_odometry_rate_ratio: 1.0 },
    },
    flags,
    segments: flags.map((f, i) => ({ id: `segment-${i + 1}`, t_start: f.t_start, t_end: f.t_end, distance_start_m: f.distance_start_m, distance_end_m: f.distance_end_m, severity: f.severity, kinds: [f.kind], flag_ids: [f.id] })),
    loops,
    corrections: { scale_applied: 1.003, gravity_rotation_deg: 0.35, time_offset_applied_s: 0.006, loops_used: loops.filter((l) => l.accepted).map((l) => l.id), loops_excluded: loops.filter((l) => !l.accepted).map((l) => l.id), notes: [] },
    series,
  };
}
