import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { canonicalJson, DEFAULT_POLICY, FLAG_KINDS, Policy, resolvePolicy, severityOf } from '@plumbline/contracts';
import { policyFileText, policyHash } from './policy-hash.ts';

describe('DEFAULT_POLICY', () => {
  it('validates against the Policy schema and covers every flag kind', () => {
    expect(Policy.safeParse(DEFAULT_POLICY).success).toBe(true);
    for (const k of FLAG_KINDS) expect(DEFAULT_POLICY.thresholds[k]).toBeDefined();
  });
  it('matches the committed packages/analysis/policy/default.json', () => {
    const file = readFileSync(new URL('../../policy/default.json', import.meta.url), 'utf8');
    expect(file).toBe(policyFileText(DEFAULT_POLICY));
    expect(policyHash(Policy.parse(JSON.parse(file)))).toBe(policyHash(DEFAULT_POLICY));
  });
  it('puts the fusion-breaking time offset (~50 ms, common practice) at critical', () => {
    expect(severityOf(49, DEFAULT_POLICY.thresholds['time-offset'])).toBe('warn');
    expect(severityOf(-50, DEFAULT_POLICY.thresholds['time-offset'])).toBe('critical');
    expect(severityOf(1e9, DEFAULT_POLICY.thresholds.unobservable)).toBe('info');
  });
});

describe('canonicalJson and policyHash', () => {
  it('sorts keys at every depth and is insensitive to key order', () => {
    expect(canonicalJson({ b: 1, a: { d: [3, { z: 1, y: 2 }], c: 'x' } })).toBe('{"a":{"c":"x","d":[3,{"y":2,"z":1}]},"b":1}');
    const reordered = JSON.parse(JSON.stringify({ overrides: [], thresholds: DEFAULT_POLICY.thresholds, version: '1', name: 'default' }));
    expect(policyHash(reordered)).toBe(policyHash(DEFAULT_POLICY));
  });
  it('changes when a threshold changes and is 64 hex characters', () => {
    const h = policyHash(DEFAULT_POLICY);
    expect(h).toMatch(/^[0-9a-f]{64}$/);
    const changed = structuredClone(DEFAULT_POLICY);
    changed.thresholds['loop-drift'].warn = 2.5;
    expect(policyHash(changed)).not.toBe(h);
  });
  it('hashes the empty object as SHA-256 of "{}" (FIPS 180-4 digest, value from node:crypto reference)', () => {
    // SHA-256("{}") = 44136fa3…; checks the hash is over the canonical text and nothing else.
    expect(policyHash({} as unknown as Policy)).toBe('44136fa355b3678a1146ad16f7e8649e94fb4fc21fe77e8310c060f61caaff8a');
  });
});

describe('resolvePolicy', () => {
  const policy = Policy.parse({
    ...structuredClone(DEFAULT_POLICY),
    overrides: [
      { site: 'northgate-yard', thresholds: { 'gnss-divergence': { warn: 1 }, gnss_max_hdop: 1.5 } },
      { robot_model: 'kestrel-mk2', thresholds: { 'time-offset': { critical: 30 } } },
      { site: 'northgate-yard', robot_model: 'kestrel-mk2', thresholds: { 'gnss-divergence': { warn: 0.5 } } },
    ],
  });
  it('applies only matching overrides, later ones winning, keeping unnamed fields', () => {
    const r = resolvePolicy(policy, 'northgate-yard', 'kestrel-mk2');
    expect(r.thresholds['gnss-divergence']).toEqual({ warn: 0.5, critical: 5, unit: 'm' });
    expect(r.thresholds['time-offset'].critical).toBe(30);
    expect(r.thresholds.gnss_max_hdop).toBe(1.5);
    expect(r.overrides).toEqual([]);
    const other = resolvePolicy(policy, 'harbourside-depot', null);
    expect(other.thresholds).toEqual(DEFAULT_POLICY.thresholds);
    expect(policyHash(other)).not.toBe(policyHash(r));
  });
  it('rejects a policy whose critical is below warn', () => {
    const bad = structuredClone(DEFAULT_POLICY);
    bad.thresholds['pose-jump'] = { warn: 2, critical: 1, unit: 'm' };
    expect(Policy.safeParse(bad).success).toBe(false);
  });
});
