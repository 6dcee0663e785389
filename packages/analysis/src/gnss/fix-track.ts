/** Good fixes with the odometry antenna track at the same instants. Times epoch seconds, positions metres. */
export interface FixTrack {
  t: Float64Array;
  /** ENU of the fix at the origin (first good fix). */
  e: Float64Array;
  n: Float64Array;
  u: Float64Array;
  /** 1-sigma horizontal accuracy reported with the fix, metres (NaN when unknown). */
  hacc: Float64Array;
  /** GGA quality code of the fix. */
  fix: Float64Array;
  /** Antenna position from odometry, odometry world frame. */
  ox: Float64Array;
  oy: Float64Array;
  oz: Float64Array;
}
