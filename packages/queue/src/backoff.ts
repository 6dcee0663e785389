/**
 * Delay before the retry that follows failed attempt number `attempt` (1-based): `baseMs * 2^(attempt-1)`.
 * The same formula as BullMQ's built-in `exponential` backoff, so both adapters retry on the same schedule.
 */
export function retryDelayMs(attempt: number, baseMs: number): number {
  return baseMs * 2 ** Math.max(0, attempt - 1);
}
