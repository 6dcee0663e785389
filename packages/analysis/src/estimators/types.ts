/**
 * Shared result shapes of the inertial estimators. Degenerate cases are values: an estimator that cannot be supported
 * by the data returns `{ ok: false, reason }` with a reason starting with "unobservable:" or "insufficient:".
 */
import type { FlagKind } from '@plumbline/contracts';

export interface Unsupported {
  ok: false;
  reason: string;
}

/** A time interval on the IMU clock, seconds (epoch). */
export interface TimeInterval {
  tStart: number;
  tEnd: number;
}

/**
 * A run-level scalar: `value` with its 1-sigma `sigma` (null when no uncertainty model applies), or `value: null`
 * with the reason the data could not support it. Mirrors `ScalarEstimate` of the report contract.
 */
export type ScalarResult =
  | { value: number; sigma: number | null; unit: string }
  | { value: null; sigma: null; unit: string; reason: string };

export type Vec3Result =
  | { value: [number, number, number]; sigma: [number, number, number] | null; unit: string }
  | { value: null; sigma: null; unit: string; reason: string };

/**
 * A per-window series: window centre times `t` (IMU clock, epoch seconds), `value` and 1-sigma `sigma`.
 * NaN in `value` marks a window the data could not support; `reasons[i]` then says why (empty string otherwise).
 */
export interface WindowSeries {
  unit: string;
  t: Float64Array;
  value: Float64Array;
  sigma: Float64Array;
  reasons: string[];
}

/**
 * A measured anomaly. Values only, no severity: triage compares `value` (in `unit`, magnitude) with its policy.
 * Times are on the IMU clock (epoch seconds).
 */
export interface InertialFinding {
  kind: FlagKind;
  tStart: number;
  tEnd: number;
  value: number | null;
  unit: string;
  detail: string;
  /** Named numbers for the flag's wording (e.g. loop χ², gate, dof); not policy values. */
  params?: Record<string, number>;
}

export function scalar(value: number, sigma: number | null, unit: string): ScalarResult {
  return { value, sigma, unit };
}

export function noScalar(unit: string, reason: string): ScalarResult {
  return { value: null, sigma: null, unit, reason };
}

export function emptySeries(unit: string, n: number): WindowSeries {
  const value = new Float64Array(n).fill(Number.NaN);
  const sigma = new Float64Array(n).fill(Number.NaN);
  return { unit, t: new Float64Array(n), value, sigma, reasons: new Array<string>(n).fill('') };
}
