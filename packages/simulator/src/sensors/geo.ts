/** Point-wise ENU → geodetic through the geometry package (WGS-84), with a cached origin and no allocation. */
import { geodesy } from '@plumbline/geometry';
import type { EnuOrigin } from '@plumbline/geometry';

let cached: EnuOrigin | null = null;
let key: [number, number, number] = [Number.NaN, 0, 0];
const enu = new Float64Array(3);
const RAD = 180 / Math.PI;

/** Writes [latDeg, lonDeg, ellipsoidal hM] of ENU point (e, n, u) around the origin into out. */
export function enuToGeodeticDeg(out: Float64Array, latDeg: number, lonDeg: number, hM: number, e: number, n: number, u: number): Float64Array {
  if (!cached || key[0] !== latDeg || key[1] !== lonDeg || key[2] !== hM) {
    cached = geodesy.createEnuOrigin(latDeg, lonDeg, hM);
    key = [latDeg, lonDeg, hM];
  }
  enu[0] = e;
  enu[1] = n;
  enu[2] = u;
  geodesy.enuToEcef(enu, enu, cached);
  geodesy.ecefToGeodetic(out, enu[0]!, enu[1]!, enu[2]!);
  out[0] = out[0]! * RAD;
  out[1] = out[1]! * RAD;
  return out;
}
