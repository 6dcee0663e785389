/**
 * GNSS fixes of the antenna (lever arm from the IMU) from the true ENU trajectory around the site origin, converted
 * to WGS-84 geodetic coordinates. Fix types follow GGA quality codes (NMEA 0183): 4 RTK fixed (σ ≈ 2 cm),
 * 5 RTK float (σ ≈ 0.3 m), 1 single (σ ≈ 2 m), 0 no fix (indoors). Position noise is first-order Gauss–Markov
 * (τ = 5 s), as GNSS errors are strongly time-correlated (common practice). Multipath jumps degrade the fix to
 * single for a few seconds; a gnss-divergence fault biases the fixes by a known horizontal offset.
 */
import type { GnssColumns } from '@plumbline/bundle';
import { quat, vec3 } from '@plumbline/geometry';
import { createKinState } from '../motion/kinematics.ts';
import { createRng } from '../prng.ts';
import type { Scenario } from '../scenario.ts';
import { SITES } from '../spec.ts';
import { enuToGeodeticDeg } from './geo.ts';

export interface GnssBlock extends GnssColumns {
  /** ground speed m/s and course over ground, degrees from north (for RMC) */
  speed: Float64Array;
  course: Float64Array;
}

export function createGnssBlock(capacity: number): GnssBlock {
  const c = () => new Float64Array(capacity);
  return { n: 0, t: c(), lat: c(), lon: c(), alt: c(), fix: c(), hacc: c(), vacc: c(), hdop: c(), sats: c(), speed: c(), course: c() };
}

/** A multipath episode (not a fault: the receiver degrades its fix type and accuracy honestly). */
export interface MultipathEvent {
  tStartS: number;
  tEndS: number;
  offsetEnu: [number, number, number];
}

const SIGMA_H = { 4: 0.015, 5: 0.25, 1: 1.5 } as const;

/** Plans multipath episodes: about one per 90 s outdoors, 1–3 s long, 1.5–4 m. */
export function planMultipath(s: Scenario): MultipathEvent[] {
  if (s.spec.noise !== 'realistic') return [];
  const rng = createRng(s.spec.seed, 'multipath');
  const out: MultipathEvent[] = [];
  for (const [a, bOpen] of s.motion.outdoorIntervals) {
    const b = Math.min(bOpen, s.spec.durationS);
    for (let t = a + 10 + rng.range(0, 90); t < b - 10; t += 60 + rng.range(0, 60)) {
      const m = rng.range(1.5, 4), dir = rng.range(0, 2 * Math.PI);
      out.push({ tStartS: t, tEndS: t + rng.range(1, 3), offsetEnu: [m * Math.cos(dir), m * Math.sin(dir), 0.5 * m * rng.gauss()] });
    }
  }
  return out;
}

export interface GnssGenerator {
  readonly count: number;
  readonly multipath: MultipathEvent[];
  fill(k0: number, count: number, out: GnssBlock): number;
}

export function createGnssGenerator(s: Scenario): GnssGenerator {
  const spec = s.spec;
  const site = SITES[spec.site];
  const dt = 1 / spec.gnssRateHz;
  const count = spec.gnssRateHz > 0 ? Math.floor(spec.durationS * spec.gnssRateHz) + 1 : 0;
  const real = spec.noise === 'realistic';
  const rng = createRng(spec.seed, 'gnss');
  const multipath = planMultipath(s);
  const divergence = s.faults.filter((f) => f.kind === 'gnss-divergence');
  const rho = Math.exp(-dt / 5);
  const gm = vec3.create();
  const st = createKinState();
  const ant = vec3.create();
  const lla = new Float64Array(3);
  let next = 0;
  let lastIndoorT = s.motion.outdoorIntervals.some(([a]) => a <= 0) ? -1e9 : 0;
  return {
    count,
    multipath,
    fill(k0, n, out) {
      if (k0 !== next) throw new RangeError(`GNSS generation must be sequential: expected ${next}, got ${k0}`);
      out.n = 0;
      const end = Math.min(count, k0 + n);
      for (let k = k0; k < end; k++) {
        const tRel = k * dt;
        s.evaluate(tRel, st);
        quat.rotateVec3(ant, st.q, s.antennaInImu);
        vec3.add(ant, ant, st.p);
        const outdoor = s.motion.outdoorIntervals.some(([a, b]) => tRel >= a && tRel < b);
        if (!outdoor) lastIndoorT = tRel;
        const sinceIndoor = tRel - lastIndoorT;
        const mp = multipath.find((m) => tRel >= m.tStartS && tRel < m.tEndS);
        const fix = !outdoor ? 0 : sinceIndoor < 3 || mp ? 1 : sinceIndoor < 8 ? 5 : 4;
        const sigma = fix === 0 ? 0 : real ? SIGMA_H[fix] : 0;
        for (let i = 0; i < 3; i++) gm[i] = rho * gm[i]! + Math.sqrt(1 - rho * rho) * (real ? rng.gauss() : 0) * (i === 2 ? 1.5 : 1);
        const j = out.n++;
        out.t[j] = s.t0Epoch + tRel;
        const spd = Math.hypot(st.v[0]!, st.v[1]!);
        out.speed[j] = spd;
        out.course[j] = ((Math.atan2(st.v[0]!, st.v[1]!) * 180) / Math.PI + 360) % 360;
        if (fix === 0) {
          out.lat[j] = out.lon[j] = out.alt[j] = Number.NaN;
          out.fix[j] = 0;
          out.hacc[j] = out.vacc[j] = out.hdop[j] = Number.NaN;
          out.sats[j] = real ? rng.int(4) : 0;
          continue;
        }
        let e = ant[0]! + sigma * gm[0]!, nn = ant[1]! + sigma * gm[1]!, u = ant[2]! + sigma * gm[2]!;
        if (mp) {
          e += mp.offsetEnu[0];
          nn += mp.offsetEnu[1];
          u += mp.offsetEnu[2];
        }
        for (const f of divergence) {
          if (tRel < (f.startS ?? 0) || tRel >= (f.endS ?? 0)) continue;
          const [bx, by] = divergenceDirection(f.axis);
          e += f.magnitude * bx;
          nn += f.magnitude * by;
        }
        enuToGeodeticDeg(lla, site.latDeg, site.lonDeg, site.hM, e, nn, u);
        out.lat[j] = lla[0]!;
        out.lon[j] = lla[1]!;
        out.alt[j] = lla[2]!;
        out.fix[j] = fix;
        const hs = fix === 4 ? 0.015 : fix === 5 ? 0.25 : mp ? 2.5 : 1.5;
        out.hacc[j] = hs;
        out.vacc[j] = 1.5 * hs;
        out.hdop[j] = (fix === 4 ? 0.7 : fix === 5 ? 1.0 : 1.6) + (real ? 0.1 * rng.uniform() : 0);
        out.sats[j] = fix === 1 ? 8 + (real ? rng.int(4) : 0) : 15 + (real ? rng.int(4) : 0);
      }
      next = end;
      return out.n;
    },
  };
}

/** Unit horizontal direction (east, north) of a GNSS bias; default bearing 60° from east. */
export function divergenceDirection(axis: readonly [number, number, number] | undefined): [number, number] {
  const x = axis?.[0] ?? 0.5, y = axis?.[1] ?? Math.sqrt(3) / 2;
  const n = Math.hypot(x, y) || 1;
  return [x / n, y / n];
}
