/**
 * Smooth rest-to-rest motion profiles. The quintic smoothstep S(x) = 10x³ − 15x⁴ + 6x⁵ has S' and S'' zero at both
 * ends, so speed ramps built from it give continuous acceleration (common practice for S-curve motion profiles).
 */

/** Quintic smoothstep and its first two derivatives at x (clamped to [0, 1]); writes [S, S', S''] into out. */
export function smoothstep(out: Float64Array, x: number): Float64Array {
  if (x <= 0) {
    out[0] = 0;
    out[1] = 0;
    out[2] = 0;
  } else if (x >= 1) {
    out[0] = 1;
    out[1] = 0;
    out[2] = 0;
  } else {
    const x2 = x * x;
    out[0] = x2 * x * (10 - 15 * x + 6 * x2);
    out[1] = 30 * x2 * (1 - 2 * x + x2);
    out[2] = 60 * x * (1 - 3 * x + 2 * x2);
  }
  return out;
}

/** ∫₀ˣ S(u) du = 2.5x⁴ − 3x⁵ + x⁶; equals ½ at x = 1. */
function smoothstepIntegral(x: number): number {
  const x4 = x * x * x * x;
  return x4 * (2.5 - 3 * x + x * x);
}

/** Speed profile of one segment: distance D covered from rest to rest with peak speed V and ramp time Ta. */
export interface SpeedProfile {
  distance: number;
  peakSpeed: number;
  rampS: number;
  durationS: number;
}

/** Plans a rest-to-rest profile; short segments never reach vMax and use two ramps back to back. */
export function planProfile(distance: number, vMax: number, rampS: number): SpeedProfile {
  if (distance <= 0) return { distance: 0, peakSpeed: 0, rampS, durationS: 0 };
  if (distance <= vMax * rampS) {
    return { distance, peakSpeed: distance / rampS, rampS, durationS: 2 * rampS };
  }
  return { distance, peakSpeed: vMax, rampS, durationS: 2 * rampS + (distance - vMax * rampS) / vMax };
}

const ss = new Float64Array(3);

/** Distance and its first three time derivatives at local time tau (s); writes [s, s', s'', s'''] into out. */
export function evalProfile(out: Float64Array, p: SpeedProfile, tau: number): Float64Array {
  const V = p.peakSpeed;
  const Ta = p.rampS;
  if (p.durationS === 0 || tau <= 0) {
    out.fill(0);
    return out;
  }
  if (tau >= p.durationS) {
    out[0] = p.distance;
    out[1] = 0;
    out[2] = 0;
    out[3] = 0;
    return out;
  }
  if (tau < Ta) {
    const x = tau / Ta;
    smoothstep(ss, x);
    out[0] = V * Ta * smoothstepIntegral(x);
    out[1] = V * ss[0]!;
    out[2] = (V * ss[1]!) / Ta;
    out[3] = (V * ss[2]!) / (Ta * Ta);
  } else if (tau <= p.durationS - Ta) {
    out[0] = 0.5 * V * Ta + V * (tau - Ta);
    out[1] = V;
    out[2] = 0;
    out[3] = 0;
  } else {
    const x = (p.durationS - tau) / Ta;
    smoothstep(ss, x);
    out[0] = p.distance - V * Ta * smoothstepIntegral(x);
    out[1] = V * ss[0]!;
    out[2] = (-V * ss[1]!) / Ta;
    out[3] = (V * ss[2]!) / (Ta * Ta);
  }
  return out;
}
