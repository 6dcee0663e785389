/**
 * Timing of the inertial analysis on an 8-hour run (200 Hz IMU, 20 Hz odometry) held in memory.
 * The run is one simulated hour tiled eight times (each copy shifted in time and continued in position), which keeps
 * the set-up fast while the estimators see 5.76 M IMU samples. Usage: node --import tsx packages/analysis/bench/inertial-bench.ts [hours]
 */
import { RunManifest } from '@plumbline/contracts';
import { makeRunSpec } from '../../simulator/src/spec.ts';
import { simulateRun } from '../../simulator/src/simulate.ts';
import { analyzeInertial } from '../src/estimators/index.ts';
import type { ImuColumns, OdometryColumns } from '@plumbline/bundle';

const hours = Number(process.argv[2] ?? 8);
const pieceS = Math.min(3600, hours * 3600);
const copies = Math.round((hours * 3600) / pieceS);
let t = performance.now();
const run = simulateRun(makeRunSpec({ seed: 5, durationS: pieceS }));
console.log(`simulated ${pieceS} s in ${((performance.now() - t) / 1000).toFixed(1)} s`);

function tile<T extends { n: number; t: Float64Array }>(src: T, keys: readonly (keyof T)[], shift: (k: keyof T, copy: number, v: number) => number): T {
  const n = src.n * copies;
  const out = { ...src, n } as T;
  for (const k of ['t', ...keys] as (keyof T)[]) {
    const a = src[k] as unknown as Float64Array;
    const b = new Float64Array(n);
    for (let c = 0; c < copies; c++) for (let i = 0; i < src.n; i++) b[c * src.n + i] = shift(k, c, a[i]!);
    (out as Record<keyof T, unknown>)[k] = b;
  }
  return out;
}
const span = pieceS + 0.005;
const imu = tile(run.imu as unknown as ImuColumns, ['gx', 'gy', 'gz', 'ax', 'ay', 'az'], (k, c, v) => (k === 't' ? v + c * span : v));
const odom = tile(run.odometry as unknown as OdometryColumns, ['x', 'y', 'z', 'qw', 'qx', 'qy', 'qz'], (k, c, v) => (k === 't' ? v + c * span : v));
odom.quality = null;
console.log(`IMU samples ${imu.n}, odometry poses ${odom.n}`);
if (process.argv[3] === 'warm') analyzeInertial({ manifest: RunManifest.parse(run.manifest), imu, odometry: odom }, { gravityMS2: run.truth.gravity_m_s2 });
t = performance.now();
const cpu0 = process.cpuUsage();
const a = analyzeInertial({ manifest: RunManifest.parse(run.manifest), imu, odometry: odom }, { gravityMS2: run.truth.gravity_m_s2 });
const total = performance.now() - t;
const cpu = process.cpuUsage(cpu0);
// CPU time of this process is the figure to compare on a shared machine; wall time includes waiting for a core.
console.log(`analyzeInertial: ${(total / 1000).toFixed(2)} s wall, ${((cpu.user + cpu.system) / 1e6).toFixed(2)} s CPU (load average ${(await import('node:os')).loadavg()[0]!.toFixed(1)})`);
for (const [k, v] of Object.entries(a.timingsMs)) console.log(`  ${k.padEnd(16)} ${(v / 1000).toFixed(2)} s`);
console.log(`scale ${a.estimates.scale.value}, findings ${a.findings.length}`);
