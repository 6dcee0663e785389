import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { DEFAULT_POLICY } from '@plumbline/contracts';
import { loadPolicy } from './policy-file.ts';

const dir = mkdtempSync(join(tmpdir(), 'plumbline-policy-'));

describe('loadPolicy', () => {
  it('gives the built-in policy without a file', () => {
    expect(loadPolicy(null)).toBe(DEFAULT_POLICY);
  });
  it('reads a valid file', () => {
    const f = join(dir, 'strict.json');
    writeFileSync(f, JSON.stringify({ ...DEFAULT_POLICY, name: 'strict' }));
    expect(loadPolicy(f).name).toBe('strict');
  });
  it('names the file and the field of an invalid policy', () => {
    const f = join(dir, 'bad.json');
    writeFileSync(f, JSON.stringify({ ...DEFAULT_POLICY, thresholds: { ...DEFAULT_POLICY.thresholds, window_s: -1 } }));
    expect(() => loadPolicy(f)).toThrow(/policy file .*bad\.json: thresholds\.window_s/);
    expect(() => loadPolicy(join(dir, 'missing.json'))).toThrow(/missing\.json: ENOENT/);
  });
});
