/**
 * WGS-84 geodesy: constants, geodetic ↔ ECEF, ECEF ↔ local East-North-Up at an origin, and normal gravity.
 * Angles are radians unless a name says Deg; heights are ellipsoidal (metres above the WGS-84 ellipsoid).
 * Constants and gravity formulas: NIMA TR8350.2, "Department of Defense World Geodetic System 1984", 3rd ed.
 * (values, table and equation numbers recalled from memory; b, e² and m are derived here from a, f, ω and GM).
 */
import type { Mat3 } from './mat3.ts';
import type { Vec3 } from './vec3.ts';

/** Semi-major axis a, metres (TR8350.2 Table 3.1). */
export const WGS84_A = 6378137.0;
/** Inverse flattening 1/f (TR8350.2 Table 3.1). */
export const WGS84_INV_F = 298.257223563;
export const WGS84_F = 1 / WGS84_INV_F;
/** Semi-minor axis b = a(1 − f) ≈ 6356752.3142 m. */
export const WGS84_B = WGS84_A * (1 - WGS84_F);
/** First eccentricity squared e² = f(2 − f) ≈ 0.00669437999014. */
export const WGS84_E2 = WGS84_F * (2 - WGS84_F);
/** Second eccentricity squared e′² = e²/(1 − e²). */
export const WGS84_EP2 = WGS84_E2 / (1 - WGS84_E2);
/** Earth's gravitational constant GM, m³/s² (TR8350.2 Table 3.1, including the atmosphere). */
export const WGS84_GM = 3.986004418e14;
/** Earth rotation rate ωE, rad/s (TR8350.2 Table 3.1). */
export const EARTH_RATE_RAD_S = 7.292115e-5;
/** Normal gravity at the equator γe, m/s² (TR8350.2 Table 3.3). */
export const GAMMA_EQUATOR = 9.7803253359;
/** Normal gravity at the poles γp, m/s² (TR8350.2 Table 3.3). */
export const GAMMA_POLE = 9.8321849378;
/** Somigliana constant k = bγp/(aγe) − 1 (TR8350.2 Table 3.3: 0.00193185265241). */
export const SOMIGLIANA_K = 0.00193185265241;
/** m = ω²a²b/GM, used by the free-air correction (TR8350.2 Table 3.3: 0.00344978650684). */
export const GRAVITY_M = (EARTH_RATE_RAD_S * EARTH_RATE_RAD_S * WGS84_A * WGS84_A * WGS84_B) / WGS84_GM;
/** Standard acceleration of gravity gn, m/s², exact (3rd CGPM 1901; ISO 80000-3). */
export const STANDARD_GRAVITY = 9.80665;

const DEG = Math.PI / 180;

/** Geodetic (lat, lon rad; h m) → Earth-centred Earth-fixed x, y, z (m). */
export function geodeticToEcef(out: Vec3, latRad: number, lonRad: number, hM: number): Vec3 {
  const sLat = Math.sin(latRad), cLat = Math.cos(latRad);
  const nRadius = WGS84_A / Math.sqrt(1 - WGS84_E2 * sLat * sLat); // prime-vertical radius of curvature
  out[0] = (nRadius + hM) * cLat * Math.cos(lonRad);
  out[1] = (nRadius + hM) * cLat * Math.sin(lonRad);
  out[2] = (nRadius * (1 - WGS84_E2) + hM) * sLat;
  return out;
}

/**
 * ECEF (m) → geodetic [latRad, lonRad, hM]. Bowring's parametric-latitude iteration (B. R. Bowring, Survey Review
 * 23(181), 1976), two steps, which is below 1 µm for heights from −10 km to +1000 km; the height uses
 * h = p·cos φ + z·sin φ − a·√(1 − e² sin² φ), well conditioned at the poles and the equator.
 */
export function ecefToGeodetic(out: Vec3, x: number, y: number, z: number): Vec3 {
  const p = Math.hypot(x, y);
  const lon = Math.atan2(y, x);
  let beta = Math.atan2(z * WGS84_A, p * WGS84_B); // initial parametric latitude
  let lat = 0;
  for (let k = 0; k < 2; k++) {
    const sb = Math.sin(beta), cb = Math.cos(beta);
    lat = Math.atan2(z + WGS84_EP2 * WGS84_B * sb * sb * sb, p - WGS84_E2 * WGS84_A * cb * cb * cb);
    beta = Math.atan2((1 - WGS84_F) * Math.sin(lat), Math.cos(lat));
  }
  const sLat = Math.sin(lat);
  out[0] = lat;
  out[1] = lon;
  out[2] = p * Math.cos(lat) + z * sLat - WGS84_A * Math.sqrt(1 - WGS84_E2 * sLat * sLat);
  return out;
}

/**
 * Rotation taking ECEF vectors into the local East-North-Up frame at (lat, lon): rows are the unit east, north and
 * up vectors in ECEF (standard result, e.g. J. Farrell, "Aided Navigation", 2008).
 */
export function enuRotation(out: Mat3, latRad: number, lonRad: number): Mat3 {
  const sp = Math.sin(latRad), cp = Math.cos(latRad), sl = Math.sin(lonRad), cl = Math.cos(lonRad);
  out[0] = -sl;
  out[1] = cl;
  out[2] = 0;
  out[3] = -sp * cl;
  out[4] = -sp * sl;
  out[5] = cp;
  out[6] = cp * cl;
  out[7] = cp * sl;
  out[8] = sp;
  return out;
}

/** A local tangent-plane origin: geodetic position, its ECEF point and the ECEF→ENU rotation. */
export interface EnuOrigin {
  readonly latRad: number;
  readonly lonRad: number;
  readonly hM: number;
  readonly ecef: Vec3;
  readonly enuFromEcef: Mat3;
}

/** Origin from degrees and ellipsoidal height (e.g. the site origin of a bundle manifest). */
export function createEnuOrigin(latDeg: number, lonDeg: number, hM: number): EnuOrigin {
  const latRad = latDeg * DEG, lonRad = lonDeg * DEG;
  return {
    latRad,
    lonRad,
    hM,
    ecef: geodeticToEcef(new Float64Array(3), latRad, lonRad, hM),
    enuFromEcef: enuRotation(new Float64Array(9), latRad, lonRad),
  };
}

/** ECEF point (m) → ENU coordinates (m) at the origin; out may alias ecef. */
export function ecefToEnu(out: Vec3, ecef: Vec3, origin: EnuOrigin): Vec3 {
  const r = origin.enuFromEcef, o = origin.ecef;
  const dx = ecef[0]! - o[0]!, dy = ecef[1]! - o[1]!, dz = ecef[2]! - o[2]!;
  out[0] = r[0]! * dx + r[1]! * dy + r[2]! * dz;
  out[1] = r[3]! * dx + r[4]! * dy + r[5]! * dz;
  out[2] = r[6]! * dx + r[7]! * dy + r[8]! * dz;
  return out;
}

/** ENU coordinates (m) at the origin → ECEF point (m); out may alias enu. */
export function enuToEcef(out: Vec3, enu: Vec3, origin: EnuOrigin): Vec3 {
  const r = origin.enuFromEcef, o = origin.ecef;
  const e = enu[0]!, n = enu[1]!, u = enu[2]!;
  out[0] = o[0]! + r[0]! * e + r[3]! * n + r[6]! * u;
  out[1] = o[1]! + r[1]! * e + r[4]! * n + r[7]! * u;
  out[2] = o[2]! + r[2]! * e + r[5]! * n + r[8]! * u;
  return out;
}

const scratch = new Float64Array(3);

/**
 * Columnar geodetic (degrees, metres) → ENU (metres) at an origin. NaN inputs give NaN outputs (absent fixes stay
 * absent). No allocation per point. Throws RangeError on mismatched lengths.
 */
export function geodeticToEnu(
  outE: Float64Array, outN: Float64Array, outU: Float64Array,
  latDeg: Float64Array, lonDeg: Float64Array, hM: Float64Array,
  origin: EnuOrigin,
): void {
  const n = latDeg.length;
  if (lonDeg.length !== n || hM.length !== n || outE.length < n || outN.length < n || outU.length < n) {
    throw new RangeError(`geodeticToEnu: column lengths differ (lat ${n}, lon ${lonDeg.length}, h ${hM.length})`);
  }
  for (let i = 0; i < n; i++) {
    geodeticToEcef(scratch, latDeg[i]! * DEG, lonDeg[i]! * DEG, hM[i]!);
    ecefToEnu(scratch, scratch, origin);
    outE[i] = scratch[0]!;
    outN[i] = scratch[1]!;
    outU[i] = scratch[2]!;
  }
}

/** Columnar ENU (metres) at an origin → geodetic (degrees, metres). No allocation per point. */
export function enuToGeodetic(
  outLatDeg: Float64Array, outLonDeg: Float64Array, outHM: Float64Array,
  e: Float64Array, nn: Float64Array, u: Float64Array,
  origin: EnuOrigin,
): void {
  const n = e.length;
  if (nn.length !== n || u.length !== n || outLatDeg.length < n || outLonDeg.length < n || outHM.length < n) {
    throw new RangeError(`enuToGeodetic: column lengths differ (e ${n}, n ${nn.length}, u ${u.length})`);
  }
  for (let i = 0; i < n; i++) {
    scratch[0] = e[i]!;
    scratch[1] = nn[i]!;
    scratch[2] = u[i]!;
    enuToEcef(scratch, scratch, origin);
    ecefToGeodetic(scratch, scratch[0]!, scratch[1]!, scratch[2]!);
    outLatDeg[i] = scratch[0]! / DEG;
    outLonDeg[i] = scratch[1]! / DEG;
    outHM[i] = scratch[2]!;
  }
}

/**
 * Normal gravity magnitude (m/s²) at geodetic latitude φ (rad) and ellipsoidal height h (m).
 * On the ellipsoid: Somigliana's closed formula γ = γe(1 + k sin²φ)/√(1 − e² sin²φ) (TR8350.2 eq. 4-1).
 * Above it: the second-order free-air expansion γh = γ[1 − (2/a)(1 + f + m − 2f sin²φ)h + (3/a²)h²]
 * (TR8350.2 eq. 4-3, from memory), valid for heights of a few tens of kilometres.
 */
export function normalGravity(latRad: number, hM = 0): number {
  const s2 = Math.sin(latRad) ** 2;
  const gamma0 = (GAMMA_EQUATOR * (1 + SOMIGLIANA_K * s2)) / Math.sqrt(1 - WGS84_E2 * s2);
  if (hM === 0) return gamma0;
  const lin = (2 / WGS84_A) * (1 + WGS84_F + GRAVITY_M - 2 * WGS84_F * s2) * hM;
  return gamma0 * (1 - lin + (3 / (WGS84_A * WGS84_A)) * hM * hM);
}
