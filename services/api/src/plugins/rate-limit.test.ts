import { describe, expect, it } from 'vitest';
import { TokenBucketLimiter } from './rate-limit.ts';

describe('TokenBucketLimiter', () => {
  it('allows capacity requests, then refuses until the bucket refills', () => {
    let now = 0;
    const l = new TokenBucketLimiter(3, 60_000, () => now);
    expect([l.take('a'), l.take('a'), l.take('a')]).toEqual([0, 0, 0]);
    // One token comes back every 20 s (3 per minute).
    expect(l.take('a')).toBe(20);
    expect(l.take('b')).toBe(0);
    now += 20_000;
    expect(l.take('a')).toBe(0);
    expect(l.exhausted('a')).toBe(true);
    now += 60_000;
    expect(l.exhausted('a')).toBe(false);
  });
});
