/** The plain-text summary table of a suite result (also the source of the README Benchmarks table). */
import type { SuiteResult } from './suite.ts';

const fmt = (v: number): string => (Math.abs(v) >= 100 ? v.toFixed(0) : Math.abs(v) >= 10 ? v.toFixed(1) : v.toFixed(2));

export function formatTable(r: SuiteResult): string {
  const m = r.machine;
  const lines = [
    `machine: ${m.cores} cores (${m.cpuModel}), ${(m.memoryBytes / 2 ** 30).toFixed(1)} GiB, Node ${m.node}, ${m.platform}, ${m.date}, load average ${m.loadAverage1m.toFixed(1)}`,
    `sizes: ${r.sizes.name}`,
    '',
    `${'figure'.padEnd(48)} ${'value'.padStart(10)}  ${'target'.padEnd(10)} met`,
  ];
  for (const c of r.checks) lines.push(`${c.figure.padEnd(48)} ${fmt(c.value).padStart(10)}  ${c.target.padEnd(10)} ${c.met ? 'yes' : 'NO'}`);
  const a = r.shiftAnalysis;
  if (a) {
    lines.push('', `Shift: ${a.counts.imu} IMU, ${a.counts.odometry} poses, ${a.counts.gnss} GNSS fixes, ${a.counts.loops} loop candidates; ` +
      `.tar.gz ${((r.workloads.shift?.bytes ?? 0) / 1e6).toFixed(1)} MB (generated in ${fmt(r.workloads.shift?.generatedS ?? r.workloads.shift?.firstGeneratedS ?? Number.NaN)} s); columns ${(a.columnarBytes / 1e6).toFixed(0)} MB`);
    lines.push(`  read ${fmt(a.read.seconds)} s (CPU ${fmt(a.read.cpuSeconds ?? Number.NaN)} s, RSS ${(a.read.maxRssBytes / 1e6).toFixed(0)} MB), analyse ${fmt(a.analyze.seconds)} s ` +
      `(CPU ${fmt(a.analyze.cpuSeconds ?? Number.NaN)} s, RSS ${(a.analyze.maxRssBytes / 1e6).toFixed(0)} MB, V8 heap peak ${((a.analyze.heapPeakBytes ?? 0) / 1e6).toFixed(0)} MB)`);
    if (a.serial) lines.push(`  analyse on one thread ${fmt(a.serial.seconds)} s (CPU ${fmt(a.serial.cpuSeconds)} s, RSS ${(a.serial.maxRssBytes / 1e6).toFixed(0)} MB)`);
  }
  if (r.ingest) lines.push(`ingest: API ${fmt(r.ingest.api.mbPerS)} MB/s, discarding server ${fmt(r.ingest.baseline.mbPerS)} MB/s`);
  if (r.list) lines.push(`run list: API ${fmt(r.list.api.requestsPerS)} req/s (p50 ${r.list.api.p50Ms} ms, p99 ${r.list.api.p99Ms} ms), constant ${fmt(r.list.baseline.requestsPerS)} req/s; body ${r.list.bodyBytes} B`);
  if (r.workloads.fleet) lines.push(`Fleet: ${r.workloads.fleet.runs} runs, ${r.workloads.fleet.robots} robots, ${r.workloads.fleet.reviews} reviews; built in ${fmt(r.workloads.fleet.insertS ?? r.workloads.fleet.firstInsertS ?? Number.NaN)} s${r.workloads.fleet.insertS === null ? ' (when first cached)' : ''}`);
  for (const b of r.burst) {
    if ('skipped' in b) lines.push(`burst bullmq ×${b.workers}: skipped (${b.skipped})`);
    else lines.push(`burst ${b.queue} ×${b.workers}: ${b.done}/${b.jobs} done, ${b.exactlyOnce} exactly once, ${b.duplicates} duplicates, ${fmt(b.jobsPerS)} jobs/s`);
  }
  const one = r.burst.find((b) => 'jobsPerS' in b && b.queue === 'bullmq' && b.workers === 1);
  const two = r.burst.find((b) => 'jobsPerS' in b && b.queue === 'bullmq' && b.workers === 2);
  if (one && two && 'jobsPerS' in one && 'jobsPerS' in two) lines.push(`  BullMQ scaling 1 → 2 workers: ×${fmt(two.jobsPerS / one.jobsPerS)}`);
  if (r.inertial) lines.push(`inertial estimators (${r.inertial.hours} h, ${r.inertial.imuSamples} IMU samples): ${fmt(r.inertial.seconds)} s`);
  if (r.poseGraph) lines.push(`pose graph: ${r.poseGraph.line}`);
  for (const e of r.errors) lines.push(`ERROR in ${e.bench}: ${e.message.split('\n')[0]}`);
  return lines.join('\n');
}
