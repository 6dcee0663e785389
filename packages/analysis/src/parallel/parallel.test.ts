import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { readBundle } from '@plumbline/bundle';
import { DEFAULT_POLICY, RunManifest } from '@plumbline/contracts';
import { makeRunSpec, simulateRun, writeRun } from '@plumbline/simulator';
import { analyzeBundle, analyzeRunDetailed, analyzeRunParallel, type RunData } from '../analyze-bundle.ts';
import { analyzeGeometry } from '../geometry-part.ts';
import { analyzeGeometryInThread } from './helper-worker.ts';

const spec = makeRunSpec({ seed: 21, durationS: 90, faults: [{ kind: 'loop-mismatch', magnitude: 6, startS: 20 }, { kind: 'time-offset', magnitude: 0.03, startS: 0 }] });
let dir: string;
let bundlePath: string;
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'plumbline-parallel-'));
  bundlePath = (await writeRun(simulateRun(spec), dir)).bundlePath;
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

function data(): RunData {
  const sim = simulateRun(spec);
  return { manifest: RunManifest.parse(sim.manifest), imu: sim.imu, odometry: sim.odometry, gnss: sim.gnss, loops: sim.loops };
}

describe('analysis on two threads', () => {
  it('gives the byte-identical report of the one-thread analysis (in-memory columns: the helper gets copies of the odometry, GNSS and loops only)', async () => {
    const one = analyzeRunDetailed(data());
    const two = await analyzeRunParallel(data());
    expect(one.report.flags.some((f) => f.kind === 'loop-mismatch')).toBe(true);
    expect(JSON.stringify(two.report)).toBe(JSON.stringify(one.report));
    expect(JSON.stringify(two.repaired)).toBe(JSON.stringify(one.repaired));
  });

  it('reads the columns onto shared memory and gives the same report from a bundle', async () => {
    const shared = await readBundle(bundlePath, { sharedMemory: true });
    const plain = await readBundle(bundlePath);
    expect(shared.imu.t.buffer).toBeInstanceOf(SharedArrayBuffer);
    expect(shared.odometry.qw.buffer).toBeInstanceOf(SharedArrayBuffer);
    expect(plain.imu.t.buffer).toBeInstanceOf(ArrayBuffer);
    expect(Array.from(shared.imu.az)).toEqual(Array.from(plain.imu.az));
    const [a, b] = await Promise.all([analyzeBundle(bundlePath, undefined, { parallel: true }), analyzeBundle(bundlePath)]);
    expect(a.verdict).toBe(b.verdict);
    expect(JSON.stringify(a)).toBe(JSON.stringify(b));
  });

  it('passes a failure in the helper thread to the caller, with its name and message', async () => {
    const broken = data();
    // odometry without its x column makes the path length throw (the bundle reader never lets one through)
    const bad = { ...broken, odometry: { ...broken.odometry, x: undefined } as unknown as RunData['odometry'] };
    let expected: Error | null = null;
    try {
      analyzeGeometry(bad, DEFAULT_POLICY);
    } catch (e) {
      expected = e as Error;
    }
    expect(expected).toBeInstanceOf(TypeError);
    await expect(analyzeGeometryInThread(bad, DEFAULT_POLICY)).rejects.toMatchObject({ name: expected!.name, message: expected!.message });
    // the thread is still there for the next request
    const ok = await analyzeGeometryInThread(data(), DEFAULT_POLICY);
    expect(ok.loops.loops.length).toBeGreaterThan(0);
  });
});
