import proj4 from 'proj4';
import { describe, expect, it } from 'vitest';
import type { GnssColumns, OdometryColumns } from '@plumbline/bundle';
import { DEFAULT_POLICY, RunManifest } from '@plumbline/contracts';
import { buildFixTrack, compareWithGnss } from './gnss-compare.ts';
import { gateFixes } from './fix-gating.ts';

const DEG = Math.PI / 180;
const ORIGIN = { lat: 47.3821, lon: 8.5412, h: 412.0 }; // harbourside-depot site origin
const toGeo = proj4('+proj=geocent +datum=WGS84 +units=m +no_defs', '+proj=longlat +datum=WGS84 +no_defs');
const toEcef = proj4('+proj=longlat +datum=WGS84 +no_defs', '+proj=geocent +datum=WGS84 +units=m +no_defs');
const o = toEcef.forward([ORIGIN.lon, ORIGIN.lat, ORIGIN.h]);

/** ENU → geodetic through ECEF with the textbook ENU basis (Farrell 2008, §2.5) and proj4 as the geodetic reference. */
function enuToLatLonH(e: number, n: number, u: number): [number, number, number] {
  const sf = Math.sin(ORIGIN.lat * DEG), cf = Math.cos(ORIGIN.lat * DEG), sl = Math.sin(ORIGIN.lon * DEG), cl = Math.cos(ORIGIN.lon * DEG);
  const x = o[0]! - sl * e - sf * cl * n + cf * cl * u;
  const y = o[1]! + cl * e - sf * sl * n + cf * sl * u;
  const z = o[2]! + cf * n + sf * u;
  const [lon, lat, h] = toGeo.forward([x, y, z]);
  return [lat!, lon!, h!];
}

function gnssColumns(n: number): GnssColumns {
  const f = () => new Float64Array(n);
  return { n, t: f(), lat: f(), lon: f(), alt: f(), fix: f().fill(1), hacc: f().fill(0.5), vacc: f().fill(1), hdop: f().fill(0.9), sats: f().fill(12) };
}

const manifest = RunManifest.parse({
  format: 'plumbline-run/1', robot_id: 'kestrel-01', run_id: 'gnss-test', site: 'harbourside-depot', started_at: '2026-03-02T08:00:00Z',
  odometry: { file: 'odometry.csv', source: 'visual-inertial', monocular: false, world_gravity_aligned: true },
  imu: { file: 'imu.csv', rate_hz: 200 },
  extrinsics: { imu_T_odom: { translation: [0, 0, 0], rotation_wxyz: [1, 0, 0, 0] } },
  gnss: { file: 'gnss.csv', antenna_in_imu: [0.3, 0.1, 0.6] },
});

/** A 300 s drive on a 60 m × 30 m ellipse at the site; odometry world = ENU rotated by 30° and shifted. */
function scenario(biasFrom: number, biasTo: number, biasEastM: number) {
  const T0 = 1_772_438_400, dur = 300, odoHz = 20, gnssHz = 5;
  const nO = dur * odoHz + 1, w = (2 * Math.PI) / 100, yawOff = 30 * DEG;
  const odo: OdometryColumns = { n: nO, t: new Float64Array(nO), x: new Float64Array(nO), y: new Float64Array(nO), z: new Float64Array(nO), qw: new Float64Array(nO), qx: new Float64Array(nO), qy: new Float64Array(nO), qz: new Float64Array(nO), quality: null };
  const truthAt = (s: number) => {
    const e = 30 * Math.sin(w * s), n = 15 - 15 * Math.cos(w * s), yaw = Math.atan2(15 * w * Math.sin(w * s), 30 * w * Math.cos(w * s));
    return { e, n, u: 0, yaw };
  };
  for (let i = 0; i < nO; i++) {
    const s = i / odoHz, p = truthAt(s);
    // Odometry world: ENU rotated by −30° about up and shifted by (5, −2).
    const c = Math.cos(-yawOff), sn = Math.sin(-yawOff);
    odo.t[i] = T0 + s;
    odo.x[i] = c * p.e - sn * p.n + 5;
    odo.y[i] = sn * p.e + c * p.n - 2;
    odo.z[i] = 0;
    const yaw = p.yaw - yawOff;
    odo.qw[i] = Math.cos(yaw / 2);
    odo.qz[i] = Math.sin(yaw / 2);
  }
  let seed = 7;
  const rnd = () => ((seed = (Math.imul(seed, 1664525) + 1013904223) >>> 0) / 4294967296 - 0.5) * 0.4; // ±0.2 m
  const nG = dur * gnssHz + 1, g = gnssColumns(nG);
  for (let i = 0; i < nG; i++) {
    const s = i / gnssHz, p = truthAt(s);
    const ae = Math.cos(p.yaw) * 0.3 - Math.sin(p.yaw) * 0.1, an = Math.sin(p.yaw) * 0.3 + Math.cos(p.yaw) * 0.1; // lever arm
    const bias = s >= biasFrom && s < biasTo ? biasEastM : 0;
    const [lat, lon, h] = enuToLatLonH(p.e + ae + bias + (i === 0 ? 0 : rnd()), p.n + an + (i === 0 ? 0 : rnd()), p.u + 0.6);
    g.t[i] = T0 + s;
    g.lat[i] = lat;
    g.lon[i] = lon;
    g.alt[i] = h;
  }
  return { odo, g, T0 };
}

describe('GNSS fix track to ENU (end to end)', () => {
  it('recovers ENU positions of a fix track within 1 mm (proj4 geodetic reference)', () => {
    const pts: Array<[number, number, number]> = [[0, 0, 0], [100, 0, 0], [0, 250, 3], [-400, -300, -10], [800, 600, 25]];
    const g = gnssColumns(pts.length);
    pts.forEach(([e, n, u], i) => {
      const [lat, lon, h] = enuToLatLonH(e, n, u);
      g.t[i] = 100 + i;
      g.lat[i] = lat;
      g.lon[i] = lon;
      g.alt[i] = h;
    });
    const odo: OdometryColumns = { n: 2, t: Float64Array.of(99, 200), x: new Float64Array(2), y: new Float64Array(2), z: new Float64Array(2), qw: Float64Array.of(1, 1), qx: new Float64Array(2), qy: new Float64Array(2), qz: new Float64Array(2), quality: null };
    const built = buildFixTrack(g, new Uint8Array(pts.length).fill(1), odo, new Float64Array(3))!;
    pts.forEach(([e, n, u], i) => {
      expect(Math.abs(built.track.e[i]! - e)).toBeLessThan(1e-3);
      expect(Math.abs(built.track.n[i]! - n)).toBeLessThan(1e-3);
      expect(Math.abs(built.track.u[i]! - u)).toBeLessThan(1e-3);
    });
    expect(built.origin.latDeg).toBeCloseTo(ORIGIN.lat, 9);
  });
});

describe('fix gating', () => {
  it('drops invalid, dead-reckoning, low-quality and high-HDOP fixes and finds the outage', () => {
    const g = gnssColumns(8);
    for (let i = 0; i < 8; i++) { g.t[i] = i; g.lat[i] = 47; g.lon[i] = 8; g.alt[i] = 400; }
    g.fix.set([1, 0, 6, 4, 5, 2, 1, 1]);
    g.hdop[5] = 9;
    g.hacc[6] = 10;
    const r = gateFixes(g, { minFixQuality: 1, maxHaccM: 3, maxHdop: 2.5, outageS: 2.5 }, 0, 7);
    expect(Array.from(r.good)).toEqual([1, 0, 0, 1, 1, 0, 0, 1]);
    expect(r.outages).toEqual([{ tStart: 0, tEnd: 3 }, { tStart: 4, tEnd: 7 }]);
    const rtk = gateFixes(g, { minFixQuality: 4, maxHaccM: 3, maxHdop: 2.5, outageS: 100 }, 0, 7);
    expect(Array.from(rtk.good)).toEqual([0, 0, 0, 1, 0, 0, 0, 0]);
  });
});

describe('odometry against GNSS', () => {
  it('aligns a clean run (lever arm applied) with no divergence and sub-0.3 m RMS', () => {
    const { odo, g } = scenario(0, 0, 0);
    const r = compareWithGnss(manifest, odo, g, DEFAULT_POLICY.thresholds);
    expect(r.ok).toBe(true);
    if (!r.ok) return;
    // Fix noise is uniform ±0.2 m per axis (σ ≈ 0.115 m): horizontal RMS ≈ 0.16 m.
    expect(r.rmseH).toBeLessThan(0.3);
    expect(r.findings).toEqual([]);
    expect((Math.atan2(r.global.r[3]!, r.global.r[0]!) * 180) / Math.PI).toBeCloseTo(30, 0);
  });
  it('locates a 3 m divergence from 150 s to 170 s within 5 s', () => {
    const { odo, g, T0 } = scenario(150, 170, 3);
    const r = compareWithGnss(manifest, odo, g, DEFAULT_POLICY.thresholds);
    expect(r.ok).toBe(true);
    if (!r.ok) return;
    expect(r.findings).toHaveLength(1);
    const f = r.findings[0]!;
    expect(Math.abs(f.tStart - (T0 + 150))).toBeLessThan(5);
    expect(Math.abs(f.tEnd - (T0 + 170))).toBeLessThan(5);
    expect(Math.abs(f.value! - 3)).toBeLessThan(0.5);
  });
});
