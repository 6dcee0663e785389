import { describe, it, expect } from 'vitest';
import proj4 from 'proj4';
import * as geodesy from './geodesy.ts';
import { createRng, expectClose } from './testing.ts';

const DEG = Math.PI / 180;

describe('WGS-84 constants', () => {
  it('derived b and e² match the published values', () => {
    // NIMA TR8350.2 3rd ed. (from memory, as listed in CHECK-VALUES.md): b = 6356752.3142 m, e² = 0.00669437999014
    expectClose(geodesy.WGS84_B, 6356752.3142, 1e-4, 'b');
    expectClose(geodesy.WGS84_E2, 0.00669437999014, 1e-14, 'e²');
    // TR8350.2 Table 3.3 (from memory): m = 0.00344978650684; k = bγp/(aγe) − 1 = 0.00193185265241
    expectClose(geodesy.GRAVITY_M, 0.00344978650684, 1e-13, 'm');
    const k = (geodesy.WGS84_B * geodesy.GAMMA_POLE) / (geodesy.WGS84_A * geodesy.GAMMA_EQUATOR) - 1;
    // γe, γp are quoted to 11 significant digits, so k derived from them is good to ~1e-11
    expectClose(k, geodesy.SOMIGLIANA_K, 2e-11, 'k from γe, γp, a, b');
  });
});

describe('geodeticToEcef fixed points (follow from the WGS-84 definition)', () => {
  it('(0°, 0°, 0 m) → (a, 0, 0) and (90° N, any, 0) → (0, 0, b)', () => {
    const out = new Float64Array(3);
    expectClose(geodesy.geodeticToEcef(out, 0, 0, 0), [6378137, 0, 0], 1e-9, 'equator');
    const pole = geodesy.geodeticToEcef(out, 90 * DEG, 37 * DEG, 0);
    expectClose(pole, [0, 0, 6356752.3142], 1e-4, 'north pole'); // b quoted to 0.1 mm
  });
});

describe('geodeticToEcef / ecefToGeodetic against proj4 (+proj=geocent +datum=WGS84)', () => {
  it('agrees under 1 mm on 1,000 random points from −500 m to 20 km and round-trips sub-mm', () => {
    const toEcef = proj4('+proj=longlat +datum=WGS84 +no_defs', '+proj=geocent +datum=WGS84 +units=m +no_defs');
    const rng = createRng(41);
    const ecef = new Float64Array(3), geo = new Float64Array(3);
    for (let i = 0; i < 1000; i++) {
      const latDeg = Math.asin(2 * rng() - 1) / DEG; // uniform on the sphere, poles included
      const lonDeg = 360 * rng() - 180;
      const h = -500 + 20500 * rng();
      const ref = toEcef.forward([lonDeg, latDeg, h]);
      geodesy.geodeticToEcef(ecef, latDeg * DEG, lonDeg * DEG, h);
      expectClose(ecef, ref, 1e-3, `ECEF case ${i}`);
      geodesy.ecefToGeodetic(geo, ecef[0]!, ecef[1]!, ecef[2]!);
      // 1e-10 rad ≈ 0.6 mm on the ground
      expectClose([geo[0]! / DEG, geo[2]!], [latDeg, h], 1e-3, `lat/h case ${i}`);
      expectClose(geo[0]!, latDeg * DEG, 1e-10, `lat rad case ${i}`);
      expectClose(geo[2]!, h, 1e-4, `h case ${i}`);
      const inv = toEcef.inverse([ecef[0]!, ecef[1]!, ecef[2]!]);
      expectClose(geo[2]!, inv[2]!, 1e-3, `h vs proj4 inverse case ${i}`);
    }
  });
});

describe('ENU at the harbourside-depot origin (47.3821° N, 8.5412° E, 412.0 m)', () => {
  const origin = geodesy.createEnuOrigin(47.3821, 8.5412, 412.0);
  it('maps the origin to (0, 0, 0), a point 100 m up to (0, 0, 100) and round-trips columnar batches', () => {
    const n = 500;
    const rng = createRng(42);
    const e = Float64Array.from({ length: n }, () => 4000 * rng() - 2000);
    const nn = Float64Array.from({ length: n }, () => 4000 * rng() - 2000);
    const u = Float64Array.from({ length: n }, () => 60 * rng() - 30);
    const lat = new Float64Array(n), lon = new Float64Array(n), h = new Float64Array(n);
    geodesy.enuToGeodetic(lat, lon, h, e, nn, u, origin);
    const e2 = new Float64Array(n), n2 = new Float64Array(n), u2 = new Float64Array(n);
    geodesy.geodeticToEnu(e2, n2, u2, lat, lon, h, origin);
    expectClose(e2, e, 1e-6, 'east');
    expectClose(n2, nn, 1e-6, 'north');
    expectClose(u2, u, 1e-6, 'up');
    const one = (latDeg: number, lonDeg: number, hM: number): number[] => {
      const oe = new Float64Array(1), on = new Float64Array(1), ou = new Float64Array(1);
      geodesy.geodeticToEnu(oe, on, ou, Float64Array.of(latDeg), Float64Array.of(lonDeg), Float64Array.of(hM), origin);
      return [oe[0]!, on[0]!, ou[0]!];
    };
    expectClose(one(47.3821, 8.5412, 412), [0, 0, 0], 1e-9, 'origin');
    expectClose(one(47.3821, 8.5412, 512), [0, 0, 100], 1e-9, 'straight up');
    // 0.001° of latitude is ≈ 111.2 m north (meridian radius M ≈ 6.367e6 m at 47°; common practice), east ≈ 0
    const north = one(47.3831, 8.5412, 412);
    expectClose(north[0]!, 0, 1e-6, 'east of a northward step');
    expect(north[1]!).toBeGreaterThan(111.0);
    expect(north[1]!).toBeLessThan(111.4);
  });
  it('keeps NaN fixes as NaN and rejects mismatched columns', () => {
    const oe = new Float64Array(1), on = new Float64Array(1), ou = new Float64Array(1);
    geodesy.geodeticToEnu(oe, on, ou, Float64Array.of(Number.NaN), Float64Array.of(8.5), Float64Array.of(400), origin);
    expect(Number.isNaN(oe[0]!)).toBe(true);
    expect(() => geodesy.geodeticToEnu(oe, on, ou, new Float64Array(2), new Float64Array(1), new Float64Array(1), origin)).toThrow(RangeError);
  });
});

describe('normal gravity (NIMA TR8350.2, from memory)', () => {
  it('equals γe at the equator and γp at the pole (Somigliana)', () => {
    expectClose(geodesy.normalGravity(0), 9.7803253359, 1e-10, 'γ equator');
    expectClose(geodesy.normalGravity(Math.PI / 2), 9.8321849378, 1e-9, 'γ pole'); // k is quoted to 14 digits
  });
  it('free-air correction ≈ −3.086e-6 s⁻² per metre near the surface', () => {
    // Free-air gradient 0.3086 mGal/m (common practice; geodesy handbooks)
    const lat = 47.3821 * DEG;
    const dg = geodesy.normalGravity(lat, 412) - geodesy.normalGravity(lat, 0);
    expectClose(dg / 412, -3.086e-6, 0.005e-6, 'free-air gradient');
  });
});
