/**
 * Micro-benchmark of the streaming CSV reader on a synthetic imu.csv (not a test).
 * Usage: node --import tsx packages/bundle/bench/csv-bench.ts [megabytes] [time decimals, default 6; 9 = ns stamps]
 */
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { readImuCsv } from '../src/index.ts';

const targetMb = Number(process.argv[2] ?? 64);
const timeDecimals = Number(process.argv[3] ?? 6);

function synthImu(bytes: number): Buffer {
  const parts: string[] = ['t,gx,gy,gz,ax,ay,az\n'];
  let size = parts[0]!.length;
  const t0 = 1_796_000_000;
  for (let i = 0; size < bytes; i++) {
    const t = (t0 + i * 0.0025).toFixed(timeDecimals);
    const s = Math.sin(i * 1e-3);
    const line = `${t},${(0.01 * s).toFixed(7)},${(-0.02 * s).toFixed(7)},${(0.003 + s * 1e-3).toFixed(7)},${(0.12 * s).toFixed(6)},${(-0.05 * s).toFixed(6)},${(9.80665 + 0.1 * s).toFixed(6)}\n`;
    parts.push(line);
    size += line.length;
  }
  return Buffer.from(parts.join(''), 'latin1');
}

const data = synthImu(targetMb * 1024 * 1024);
const dir = await mkdtemp(join(tmpdir(), 'plumbline-bench-'));
const path = join(dir, 'imu.csv');
await writeFile(path, data);
try {
  for (let run = 0; run < 3; run++) {
    const chunks: Buffer[] = [];
    for (let o = 0; o < data.length; o += 1 << 20) chunks.push(data.subarray(o, o + (1 << 20)));
    // CPU time as well as wall time: on a shared machine the wall clock also measures the neighbours
    const cpu0 = process.cpuUsage();
    let t = performance.now();
    const mem = await readImuCsv(chunks, { file: 'imu.csv' });
    const memS = (performance.now() - t) / 1000;
    const cpu = process.cpuUsage(cpu0);
    const memCpuS = (cpu.user + cpu.system) / 1e6;
    t = performance.now();
    const disk = await readImuCsv(path, { file: 'imu.csv' });
    const diskS = (performance.now() - t) / 1000;
    const mb = data.length / 1e6;
    console.log(
      `run ${run + 1}: ${mem.columns.n} samples, ${mb.toFixed(1)} MB; in memory ${(mb / memS).toFixed(0)} MB/s ` +
        `(${(mb / memCpuS).toFixed(0)} MB per CPU-second), from file ${(mb / diskS).toFixed(0)} MB/s (${disk.columns.n} samples)`,
    );
  }
} finally {
  await rm(dir, { recursive: true, force: true });
}
