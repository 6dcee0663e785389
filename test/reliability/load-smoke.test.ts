/**
 * Smoke version of scripts/reliability-load.ts (the full run is 60 s with 50 robots, 20 leads, 5 integrators):
 * ~8 s with fewer clients, same checks — no 5xx, no transport errors, every upload's SHA-256 found intact in the
 * store, every webhook correctly signed.
 */
import { describe, expect, it } from 'vitest';
import { formatTable, runLoad } from './load.ts';
import { writeFigures } from './harness.ts';

describe('load smoke (loopback)', () => {
  it('holds 10 robots, 4 leads and 2 integrators for 8 s with zero 5xx and every upload intact', async () => {
    const r = await runLoad({ seconds: 8, robots: 10, leads: 4, integrators: 2 });
    process.stdout.write(`${formatTable(r)}\n`);
    expect(r.errors5xx).toBe(0);
    expect(r.transportErrors).toBe(0);
    expect(r.uploads).toBeGreaterThanOrEqual(10);
    expect(r.uploadsVerified).toBe(r.uploads);
    expect(r.webhooksReceived).toBeGreaterThan(0);
    expect(r.webhooksSignatureOk).toBe(r.webhooksReceived);
    for (const [route, f] of Object.entries(r.routes)) expect(Number.isFinite(f.p99Ms), route).toBe(true);
    await writeFigures('load-smoke', r as unknown as Record<string, unknown>);
  }, 90_000);
});
