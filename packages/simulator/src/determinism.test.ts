import { createHash } from 'node:crypto';
import { existsSync, readdirSync, readFileSync } from 'node:fs';
import { mkdtemp, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { demoFleet } from './fleet.ts';
import { writeLongRun } from './io/long-run.ts';
import { writeRun } from './io/write.ts';
import { createRng } from './prng.ts';
import { simulateRun } from './simulate.ts';
import { makeRunSpec } from './spec.ts';

const temps: string[] = [];
async function tempDir(): Promise<string> {
  const d = await mkdtemp(join(tmpdir(), 'plumbline-sim-'));
  temps.push(d);
  return d;
}
afterAll(async () => {
  for (const d of temps) await rm(d, { recursive: true, force: true });
});

function hashes(dir: string): Record<string, string> {
  const out: Record<string, string> = {};
  const walk = (d: string, prefix: string) => {
    for (const e of readdirSync(d, { withFileTypes: true }).sort((a, b) => a.name.localeCompare(b.name))) {
      if (e.isDirectory()) walk(join(d, e.name), `${prefix}${e.name}/`);
      else out[`${prefix}${e.name}`] = createHash('sha256').update(readFileSync(join(d, e.name))).digest('hex');
    }
  };
  walk(dir, '');
  return out;
}

describe('determinism', () => {
  const spec = makeRunSpec({ seed: 42, durationS: 40, imuRateHz: 100, faults: [{ kind: 'pose-jump', magnitude: 0.3, startS: 20 }] });
  it('same seed gives identical bytes, a different seed different bytes', async () => {
    const [a, b, c] = [await tempDir(), await tempDir(), await tempDir()];
    await writeRun(simulateRun(spec), a);
    await writeRun(simulateRun(spec), b);
    await writeRun(simulateRun({ ...spec, seed: 43 }), c);
    const ha = hashes(a), hb = hashes(b), hc = hashes(c);
    expect(Object.keys(ha).length).toBeGreaterThanOrEqual(5);
    expect(hb).toEqual(ha);
    expect(hc['bundle/imu.csv.gz']).not.toBe(ha['bundle/imu.csv.gz']);
    expect(hc['bundle/odometry.csv.gz']).not.toBe(ha['bundle/odometry.csv.gz']);
  });
  it('tar.gz archives are byte-stable too', async () => {
    const [a, b] = [await tempDir(), await tempDir()];
    await writeRun(simulateRun(spec), a, { archive: 'tar.gz' });
    await writeRun(simulateRun(spec), b, { archive: 'tar.gz' });
    expect(hashes(b)).toEqual(hashes(a));
    expect(existsSync(join(a, 'bundle'))).toBe(false);
  });
});

describe('streaming writer', () => {
  it('writeLongRun (chunked generation) writes the same bytes as writeRun for the same spec', async () => {
    const spec = makeRunSpec({ seed: 8, durationS: 70, imuRateHz: 100, site: 'northgate-yard', faults: [{ kind: 'imu-gap', magnitude: 0, startS: 40.004, endS: 41 }] });
    const [a, b] = [await tempDir(), await tempDir()];
    await writeRun(simulateRun(spec), a, { level: 6 });
    await writeLongRun(spec, b, { level: 6 });
    const ha = hashes(a);
    expect(Object.keys(ha)).toContain('bundle/gnss.csv.gz');
    expect(hashes(b)).toEqual(ha);
  });
});

describe('seed runs', () => {
  it('regenerating a committed seed run reproduces its files byte for byte', async () => {
    const root = resolve(import.meta.dirname, '../../../seed-runs');
    const fleet = demoFleet();
    expect(fleet.length).toBeGreaterThanOrEqual(24);
    expect(new Set(fleet.map((r) => r.spec.robotId)).size).toBeGreaterThanOrEqual(8);
    const kinds = new Set(fleet.flatMap((r) => r.spec.faults.map((f) => f.kind)));
    expect(kinds.size).toBe(11);
    const pick = fleet.find((r) => r.spec.robotId === 'wren-01' && r.spec.faults.length === 0)!;
    const out = await tempDir();
    await writeRun(simulateRun(pick.spec), out, { gzip: true, nmea: pick.nmea });
    const committed = hashes(join(root, pick.spec.robotId, pick.spec.runId));
    expect(Object.keys(committed).length).toBeGreaterThanOrEqual(4);
    expect(hashes(out)).toEqual(committed);
  });
});

describe('PRNG', () => {
  it('normal deviates have mean 0 and variance 1 (n = 200 000, tolerance 5 standard errors)', () => {
    const rng = createRng(9, 'test');
    const n = 200_000;
    let s = 0, s2 = 0;
    for (let i = 0; i < n; i++) {
      const x = rng.gauss();
      s += x;
      s2 += x * x;
    }
    const mean = s / n, variance = s2 / n - mean * mean;
    expect(Math.abs(mean)).toBeLessThan(5 / Math.sqrt(n));
    // The standard error of the sample variance of a normal is √(2/n).
    expect(Math.abs(variance - 1)).toBeLessThan(5 * Math.sqrt(2 / n));
  });
  it('streams with different labels differ', () => {
    expect(createRng(1, 'imu').uniform()).not.toBe(createRng(1, 'odometry').uniform());
  });
});
