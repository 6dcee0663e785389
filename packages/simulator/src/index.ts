/**
 * @plumbline/simulator — deterministic mapping runs with injected faults of known size, written as run bundles with
 * truth.json beside them.
 */
export { simulateRun, MAX_IN_MEMORY_S } from './simulate.ts';
export type { SimulatedRun } from './simulate.ts';
export { writeRun } from './io/write.ts';
export type { WriteOptions, WrittenRun } from './io/write.ts';
export { writeLongRun } from './io/long-run.ts';
export { makeRunSpec, validateRunSpec, DEFAULT_IMU, FAULT_KINDS, SITES } from './spec.ts';
export type { FaultKind, FaultSpec, ImuNoiseSpec, RunSpec, SiteId } from './spec.ts';
export { demoFleet } from './fleet.ts';
export type { FleetRun } from './fleet.ts';
export { parseFault, FaultSyntaxError } from './fault-parse.ts';
export { createScenario, gravityInOdomWorld } from './scenario.ts';
export type { Scenario, RigidPose } from './scenario.ts';
export { createKinState } from './motion/kinematics.ts';
export type { KinState, MotionModel, EulerKinematics } from './motion/kinematics.ts';
export { GEOID_SEPARATION_M } from './truth.ts';
export type { RunTruth, TruthFault } from './truth.ts';
export { nmeaChecksum } from './io/nmea.ts';
export { createRng } from './prng.ts';
export type { Rng } from './prng.ts';
export { driftingFleetShifts, simulateDriftShift, DRIFTING_FLEET } from './fleet-drift.ts';
export type { DriftKind, DriftingRobot, DriftShift } from './fleet-drift.ts';
