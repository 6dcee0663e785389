/** Inertial consistency estimators (re-exported by the analysis package). */
export * from './types.ts';
export { checkTiming, findSaturation, findStationary, type StreamTiming, type SaturationRun, type StationaryOptions } from './integrity.ts';
export { checkUnits, type UnitsCheck } from './units.ts';
export { preintegrate, correct, DEFAULT_IMU_NOISE, type ImuNoise, type Preintegrated } from './preintegration.ts';
export { preintegrateBatch, correctBatchAt, type PreintegrationBatch } from './preintegration-batch.ts';
export { estimateTimeOffset, type TimeOffsetOptions, type TimeOffsetResult } from './time-offset.ts';
export { selectKeyframes, odomToImuTime, NO_CLOCK_OFFSET, type Keyframes, type ClockModel } from './keyframes.ts';
export { estimateRotation, handEyeRotation, type RotationOptions, type RotationResult } from './rotation.ts';
export { buildAlignmentRows, type AlignmentRows } from './alignment-rows.ts';
export { estimateGravityScale, type GravityScaleOptions, type GravityScaleResult } from './gravity-scale.ts';
export { estimateScaleDrift, type ScaleDriftResult, type ScaleStep } from './scale-drift.ts';
export { allanDeviation, estimateNoiseDensities, type NoiseDensityResult } from './allan.ts';
export { accelBiasFromStationary, combineAccelBias } from './accel-bias.ts';
export { findPoseJumps, type PoseJump } from './pose-jump.ts';
export { analyzeInertial, type InertialInput, type InertialOptions } from './inertial.ts';
export type { InertialAnalysis, InertialEstimates, InertialSeries, InertialIntegrity } from './inertial-types.ts';
