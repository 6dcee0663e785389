/**
 * Columnar (struct-of-arrays) sensor data as read from a bundle. Every array has length `n`
 * (readers trim their growable stores with `subarray`). Times are seconds on the robot clock (epoch).
 */

/** imu.csv: angular rate (rad/s) and specific force (m/s²) in the IMU frame. */
export interface ImuColumns {
  n: number;
  t: Float64Array;
  gx: Float64Array;
  gy: Float64Array;
  gz: Float64Array;
  ax: Float64Array;
  ay: Float64Array;
  az: Float64Array;
}

/** odometry.csv: pose of the odometry body frame in the odometry world frame (Hamilton, w-first). */
export interface OdometryColumns {
  n: number;
  t: Float64Array;
  x: Float64Array;
  y: Float64Array;
  z: Float64Array;
  qw: Float64Array;
  qx: Float64Array;
  qy: Float64Array;
  qz: Float64Array;
  /** 0..1 tracking quality when the file has the column, else null. */
  quality: Float64Array | null;
}

/** gnss.csv or gnss.nmea: WGS-84 geodetic fixes. Absent values are NaN. */
export interface GnssColumns {
  n: number;
  t: Float64Array;
  /** degrees */
  lat: Float64Array;
  /** degrees */
  lon: Float64Array;
  /** ellipsoidal height, metres (from NMEA: altitude above MSL + geoid separation) */
  alt: Float64Array;
  /** NMEA 0183 GGA quality code (0 invalid, 1 GPS, 2 DGPS, 4 RTK fixed, 5 RTK float, ...) */
  fix: Float64Array;
  /** 1-sigma horizontal accuracy, metres (NaN when unknown) */
  hacc: Float64Array;
  /** 1-sigma vertical accuracy, metres (NaN when unknown) */
  vacc: Float64Array;
  /** horizontal dilution of precision (NaN when unknown) */
  hdop: Float64Array;
  /** satellites used (NaN when unknown) */
  sats: Float64Array;
}

/** loops.csv: pose of the body at tB expressed in the body frame at tA; sigmas NaN when absent. */
export interface LoopColumns {
  n: number;
  tA: Float64Array;
  tB: Float64Array;
  x: Float64Array;
  y: Float64Array;
  z: Float64Array;
  qw: Float64Array;
  qx: Float64Array;
  qy: Float64Array;
  qz: Float64Array;
  /** 1-sigma translation, metres */
  sigmaT: Float64Array;
  /** 1-sigma rotation, radians */
  sigmaR: Float64Array;
}
