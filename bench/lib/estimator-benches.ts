/**
 * The analysis package's own timing scripts, run as children: the inertial estimators on an in-memory 8-hour run
 * (packages/analysis/bench/inertial-bench.ts) and the pose-graph solve with 30,000 keyframes and 500 loops
 * (packages/analysis/bench/pose-graph-bench.ts). Their printed figures are parsed here.
 */
import { spawn } from 'node:child_process';
import { fileURLToPath } from 'node:url';

const ROOT = fileURLToPath(new URL('../../', import.meta.url));

function run(script: string, args: string[]): Promise<string> {
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, ['--import', 'tsx', `${ROOT}${script}`, ...args], { stdio: ['ignore', 'pipe', 'pipe'], cwd: ROOT });
    let out = '';
    let err = '';
    child.stdout.on('data', (c: Buffer) => (out += c.toString()));
    child.stderr.on('data', (c: Buffer) => (err += c.toString()));
    child.on('error', reject);
    child.on('close', (code) => (code === 0 ? resolve(out) : reject(new Error(`${script} exited with ${code}: ${err.slice(-1500)}`))));
  });
}

export interface InertialBenchResult {
  hours: number;
  imuSamples: number;
  seconds: number;
  /** per-stage seconds as printed by the script */
  stages: Record<string, number>;
}

export async function benchInertial(hours: number): Promise<InertialBenchResult> {
  const out = await run('packages/analysis/bench/inertial-bench.ts', [String(hours)]);
  const seconds = Number(/analyzeInertial: ([\d.]+) s/.exec(out)?.[1] ?? Number.NaN);
  const imuSamples = Number(/IMU samples (\d+)/.exec(out)?.[1] ?? Number.NaN);
  const stages: Record<string, number> = {};
  for (const m of out.matchAll(/^ {2}(\S+)\s+([\d.]+) s$/gm)) stages[m[1]!] = Number(m[2]);
  return { hours, imuSamples, seconds, stages };
}

export interface PoseGraphBenchResult {
  keyframes: number;
  loops: number;
  seconds: number;
  /** CPU seconds of the solve when the script prints them (wall time suffers on a shared machine) */
  cpuSeconds: number | null;
  iterations: number;
  worstErrorM: number;
  line: string;
}

export async function benchPoseGraph(): Promise<PoseGraphBenchResult> {
  const out = (await run('packages/analysis/bench/pose-graph-bench.ts', [])).trim();
  const num = (re: RegExp) => Number(re.exec(out)?.[1] ?? Number.NaN);
  return {
    keyframes: num(/(\d+) keyframes/), loops: num(/(\d+) loops/), seconds: num(/total (\d+) ms/) / 1000,
    cpuSeconds: /(\d+) ms CPU/.test(out) ? num(/(\d+) ms CPU/) / 1000 : null,
    iterations: num(/\((\d+) iterations/), worstErrorM: num(/truth ([\d.]+) m/), line: out,
  };
}
