/**
 * In-memory token buckets keyed by a string (token id, client address). Each key holds `capacity` tokens and
 * regains `capacity` per `periodMs`, continuously. Buckets untouched for a full period are dropped on the next
 * sweep, so memory stays bounded by the keys active in one period. Single-process; behind several API replicas
 * each replica limits on its own.
 */
export class TokenBucketLimiter {
  private readonly buckets = new Map<string, { tokens: number; atMs: number }>();
  private lastSweepMs = 0;

  constructor(
    private readonly capacity: number,
    private readonly periodMs: number,
    private readonly nowMs: () => number,
  ) {}

  /** Takes one token for `key`; returns 0 when allowed, otherwise the seconds until one is available. */
  take(key: string): number {
    const now = this.nowMs();
    this.sweep(now);
    const ratePerMs = this.capacity / this.periodMs;
    const b = this.buckets.get(key) ?? { tokens: this.capacity, atMs: now };
    b.tokens = Math.min(this.capacity, b.tokens + (now - b.atMs) * ratePerMs);
    b.atMs = now;
    this.buckets.set(key, b);
    if (b.tokens >= 1) {
      b.tokens -= 1;
      return 0;
    }
    return Math.ceil((1 - b.tokens) / ratePerMs / 1000);
  }

  /** True when `key` has no token left (without taking one). */
  exhausted(key: string): boolean {
    const b = this.buckets.get(key);
    if (!b) return false;
    const tokens = Math.min(this.capacity, b.tokens + (this.nowMs() - b.atMs) * (this.capacity / this.periodMs));
    return tokens < 1;
  }

  private sweep(now: number): void {
    if (now - this.lastSweepMs < this.periodMs) return;
    this.lastSweepMs = now;
    for (const [k, b] of this.buckets) if (now - b.atMs > this.periodMs) this.buckets.delete(k);
  }
}
