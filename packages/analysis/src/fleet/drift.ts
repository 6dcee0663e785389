/**
 * Calibration drift across a robot's runs: a change point (CUSUM) and a robust trend (Theil–Sen with Sen's interval)
 * on each calibration series, reported as maintenance findings in plain words.
 */
import type { CalibrationMetric, CalibrationSeries, MaintenanceFinding } from '@plumbline/contracts';
import { cusum, robust, stepChange, theilSen } from '@plumbline/geometry';
import { calibrationSeries, type RunEstimates } from './calibration-series.ts';
import { DRIFT_RULES, type DriftRule } from './drift-rules.ts';

export interface DriftDetection {
  metric: CalibrationMetric;
  method: 'trend' | 'step';
  /** Index (into the series) of the first run of the drift, and of the latest run. */
  onset: number;
  latest: number;
  /** Recent level minus the level before the onset, metric unit. */
  change: number;
  slope: number | null;
  slopeLow: number | null;
  slopeHigh: number | null;
  /** Robust run-to-run noise used by the tests, metric unit. */
  sigma: number;
}

export interface DriftOptions {
  /** Fewest runs with a value before anything is said (default 8). */
  minRuns?: number;
  /** CUSUM slack and threshold in units of the run-to-run sigma (defaults 0.5 and 5: NIST/SEMATECH e-Handbook §6.3.2.3 — from memory). */
  slackSigma?: number;
  thresholdSigma?: number;
  /**
   * A finding on this series is already open: keep it while the change is at least half the rule's minimum and 1.5
   * standard errors (hysteresis, so a drift near the limit does not open and resolve on alternate runs).
   */
  holding?: boolean;
}

function medianOf(values: readonly number[]): number {
  return robust.median(Float64Array.from(values));
}

/**
 * Robust run-to-run noise: 1.4826·MAD of first differences / √2 (a trend or one step barely moves it),
 * floored at a tenth of the rule's minimum change so that exactly repeated estimates do not give σ = 0.
 */
function noiseSigma(ys: readonly number[], rule: DriftRule): number {
  const d = new Float64Array(ys.length - 1);
  for (let i = 1; i < ys.length; i++) d[i - 1] = ys[i]! - ys[i - 1]!;
  const m = robust.median(d);
  for (let i = 0; i < d.length; i++) d[i] = Math.abs(d[i]! - m);
  return Math.max((robust.MAD_TO_SIGMA * robust.median(d)) / Math.SQRT2, rule.minChange / 10);
}

/**
 * Detects a calibration drift in one series (runs oldest first). Method: the run-to-run noise σ is estimated
 * robustly; a two-sided tabular CUSUM (Page 1954; slack σ/2, threshold 5σ) against the median of the first third of
 * the runs gives the onset of a shift; without an alarm, a Theil–Sen slope over all runs whose 95 % interval excludes
 * zero (Sen 1968, at least ten runs) is a trend from the first run. Either is a finding only when the recent level
 * (median of up to five runs since the onset) differs from the level before the onset (median of up to eight runs)
 * by at least the rule's minimum change and by three standard errors, in the direction the rule cares about. `null`: no drift, or too few runs.
 */
export function detectDrift(series: CalibrationSeries, rule: DriftRule = DRIFT_RULES[series.metric], options: DriftOptions = {}): DriftDetection | null {
  const minRuns = options.minRuns ?? 8;
  // Estimates far less certain than is usual for this robot (σ above 2.5× the median σ) are left out.
  const sigmas = series.sigma.filter((x): x is number => x !== null && Number.isFinite(x));
  const sigmaCap = sigmas.length >= 3 ? 2.5 * medianOf(sigmas) : Infinity;
  const idx: number[] = [];
  const ys: number[] = [];
  series.v.forEach((v, i) => {
    const sv = series.sigma[i] ?? null;
    if (v !== null && Number.isFinite(v) && !(sv !== null && sv > sigmaCap)) {
      idx.push(i);
      ys.push(v);
    }
  });
  const n = ys.length;
  if (n < minRuns) return null;
  const sigma = noiseSigma(ys, rule);
  const baseN = Math.max(3, Math.min(8, Math.floor(n / 3)));
  const baseline = medianOf(ys.slice(0, baseN));
  const alarms = cusum(Float64Array.from(ys), baseline, (options.slackSigma ?? 0.5) * sigma, (options.thresholdSigma ?? 5) * sigma);
  const first = alarms[0];
  let onset: number;
  if (first) {
    onset = Math.min(first.onset, n - 1);
  } else {
    // A held finding needs no new alarm: its level against the baseline decides below.
    if (!options.holding) {
      if (n < 10) return null;
      const fit = theilSen(Float64Array.from(idx), Float64Array.from(ys));
      if (!fit.ok || (fit.slopeLow <= 0 && fit.slopeHigh >= 0)) return null;
    }
    onset = 0;
  }
  // A step and a ramp both trip the CUSUM. The step is located by the least-squares split (Hinkley 1970), the ramp
  // starts at the CUSUM onset; the model with the smaller sum of squared residuals names the method.
  const ysArr = Float64Array.from(ys);
  let method: 'trend' | 'step' = 'trend';
  if (first) {
    const split = stepChange(ysArr, 1);
    if (split.ok && split.sseTwo < rampSse(idx, ys, onset)) {
      method = 'step';
      onset = split.index;
    }
  }
  // Levels: up to five recent runs (at least three) against up to eight runs before the onset. The change must
  // pass the rule's size and be three standard errors of a difference of medians (σ·1.2533/√m each, the
  // asymptotic efficiency of the median; from memory) so single wild estimates do not make a finding.
  const [minFactor, seFactor] = options.holding ? [0.5, 1.5] : [1, 3];
  const levelChange = (from: number): number | null => {
    const recentN = Math.max(3, Math.min(5, n - from));
    const beforeYs = from === 0 ? ys.slice(0, baseN) : ys.slice(Math.max(0, from - 8), from);
    const change = medianOf(ys.slice(n - recentN)) - medianOf(beforeYs);
    const standardError = 1.2533 * sigma * Math.sqrt(1 / recentN + 1 / beforeYs.length);
    if (Math.abs(change) < Math.max(minFactor * rule.minChange, seFactor * standardError)) return null;
    return rule.direction === 'up' && change < 0 ? null : change;
  };
  let change = levelChange(onset);
  // A held finding also stays while the recent level still stands off the baseline of the first runs.
  if (change === null && options.holding && onset !== 0) {
    onset = 0;
    method = 'trend';
    change = levelChange(0);
  }
  if (change === null) return null;
  const tail = theilSen(Float64Array.from(idx.slice(onset)), ysArr.subarray(onset));
  return {
    metric: series.metric,
    method,
    onset: idx[onset]!,
    latest: idx[n - 1]!,
    change,
    slope: tail.ok ? tail.slope : null,
    slopeLow: tail.ok ? tail.slopeLow : null,
    slopeHigh: tail.ok ? tail.slopeHigh : null,
    sigma,
  };
}

/** Residual sum of squares of "flat, then a Theil–Sen line from `from` on". */
function rampSse(idx: readonly number[], ys: readonly number[], from: number): number {
  let sse = 0;
  if (from > 0) {
    const head = ys.slice(0, from);
    const mean = head.reduce((a, b) => a + b, 0) / head.length;
    for (const y of head) sse += (y - mean) ** 2;
  }
  const fit = theilSen(Float64Array.from(idx.slice(from)), Float64Array.from(ys.slice(from)));
  if (!fit.ok) return Infinity;
  for (let i = from; i < ys.length; i++) sse += (ys[i]! - fit.intercept - fit.slope * idx[i]!) ** 2;
  return sse;
}

function formatDate(iso: string | null): string {
  return iso === null ? 'an undated run' : iso.slice(0, 10);
}

/** The plain sentence of a finding, e.g. "camera–IMU rotation has moved 1.4° over 12 runs since 2026-03-02: recalibrate". */
export function driftMessage(d: DriftDetection, series: CalibrationSeries, rule: DriftRule = DRIFT_RULES[d.metric]): string {
  const amount = (Math.abs(d.change) * rule.display.factor).toFixed(rule.display.digits);
  const verb = rule.direction === 'up' ? 'has grown by' : d.change > 0 ? 'has risen by' : 'has fallen by';
  const moved = d.metric === 'extrinsic_rotation_deg' ? 'has moved' : verb;
  const runs = d.latest - d.onset + 1;
  const how = d.method === 'step' ? `in a step ${runs === 1 ? 'at the latest run' : `${runs} runs ago`}` : `over ${runs} runs`;
  return `${rule.noun} ${moved} ${amount}${rule.display.unit} ${how} since ${formatDate(series.started_at[d.onset] ?? null)}: ${rule.action}`;
}

/**
 * Maintenance findings of one robot from its runs' estimates (oldest first): one per drifting metric, open, stamped
 * with `nowIso`. `open` names the metrics with a finding already open (held with the relaxed limits of `holding`).
 * Pure; the store keeps `detected_at` of a finding that was already open.
 */
export function maintenanceFindings(
  robotId: string,
  runs: readonly RunEstimates[],
  nowIso: string,
  options: Omit<DriftOptions, 'holding'> & { open?: ReadonlySet<CalibrationMetric> } = {},
): MaintenanceFinding[] {
  const out: MaintenanceFinding[] = [];
  for (const series of calibrationSeries(runs)) {
    const rule = DRIFT_RULES[series.metric];
    const d = detectDrift(series, rule, { ...options, holding: options.open?.has(series.metric) ?? false });
    if (!d) continue;
    const sinceRun = series.run[d.onset]!;
    out.push({
      id: `${robotId}/${series.metric}/${sinceRun}`,
      robot_id: robotId,
      metric: series.metric,
      severity: Math.abs(d.change) >= rule.criticalChange ? 'critical' : 'warn',
      method: d.method,
      change: d.change,
      unit: series.unit,
      runs: d.latest - d.onset + 1,
      since_run: sinceRun,
      since: series.started_at[d.onset] ?? null,
      latest_run: series.run[d.latest]!,
      slope_per_run: d.slope,
      slope_low: d.slopeLow,
      slope_high: d.slopeHigh,
      message: driftMessage(d, series, rule),
      action: rule.action,
      status: 'open',
      detected_at: nowIso,
      updated_at: nowIso,
    });
  }
  return out;
}
