export { calibrationSeries, CALIBRATION_METRICS, CALIBRATION_METRIC_NAMES, type RunEstimates } from './calibration-series.ts';
export { DRIFT_RULES, type DriftRule } from './drift-rules.ts';
export { detectDrift, driftMessage, maintenanceFindings, type DriftDetection, type DriftOptions } from './drift.ts';
export { feedbackCells, feedbackReport, suggestThreshold, type SuggestOptions } from './feedback.ts';
export { keepRanges, mergeGate, type MergeGateInput } from './merge-gate.ts';
