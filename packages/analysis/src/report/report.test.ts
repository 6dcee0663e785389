import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { DEFAULT_POLICY, Policy, Report, reportJsonSchema, RunManifest } from '@plumbline/contracts';
import { makeRunSpec, simulateRun } from '@plumbline/simulator';
import { analyzeRun, type RunData } from '../analyze-bundle.ts';
import { policyHash } from '../triage/policy-hash.ts';
import { roundReport } from './round.ts';

function simulated(seed: number): RunData {
  const sim = simulateRun(makeRunSpec({ seed, durationS: 90, faults: [{ kind: 'loop-mismatch', magnitude: 6, startS: 20 }] }));
  return { manifest: RunManifest.parse(sim.manifest), imu: sim.imu, odometry: sim.odometry, gnss: sim.gnss, loops: sim.loops };
}

describe('report', () => {
  const data = simulated(11);
  const a = analyzeRun(data);

  it('validates against the plumbline-report/1 schema and stamps version and policy hash', () => {
    const parsed = Report.safeParse(a);
    expect(parsed.success, JSON.stringify(parsed.error?.issues.slice(0, 3))).toBe(true);
    expect(a.analysis_version).toBe(JSON.parse(readFileSync(new URL('../../package.json', import.meta.url), 'utf8')).version);
    expect(a.policy_hash).toBe(policyHash(DEFAULT_POLICY));
    for (const s of Object.values(a.series)) if (s && 't' in s) expect(s.t.length).toBeLessThanOrEqual(2000);
  });

  it('is byte-identical for the same input and policy (a second, independent simulation of the same seed)', () => {
    const b = analyzeRun(simulated(11));
    expect(JSON.stringify(b)).toBe(JSON.stringify(a));
  });

  it('changes its policy hash (and only by policy) under another policy', () => {
    const strict = Policy.parse({ ...structuredClone(DEFAULT_POLICY), name: 'strict' });
    const b = analyzeRun(data, strict);
    expect(b.policy_hash).not.toBe(a.policy_hash);
    expect(JSON.stringify({ ...b, policy_hash: '' })).toBe(JSON.stringify({ ...a, policy_hash: '' }));
  });

  it('excludes the injected false loop', () => {
    expect(a.loops.some((l) => l.source === 'robot' && !l.accepted)).toBe(true);
    expect(a.flags.some((f) => f.kind === 'loop-mismatch')).toBe(true);
  });
});

describe('roundReport', () => {
  it('keeps 6 significant digits, epoch t0 to the microsecond, and writes −0 as 0', () => {
    expect(roundReport({ a: 1.23456789, t0: 1772438400.1234567, b: [-0.0000001234567, 12], c: -0 })).toEqual({ a: 1.23457, t0: 1772438400.123457, b: [-1.23457e-7, 12], c: 0 });
  });
});

describe('docs/report-schema.json', () => {
  it('is the current export of the zod schema (regenerate with packages/analysis/scripts/write-report-schema.ts)', () => {
    const file = readFileSync(new URL('../../../../docs/report-schema.json', import.meta.url), 'utf8');
    expect(file).toBe(reportJsonSchema());
  });
});
