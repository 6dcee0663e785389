export * from './types.ts';
export * from './errors.ts';
export { createEmbeddedQueue } from './embedded.ts';
export { createBullmqQueue, obliterateBullmqQueue } from './bullmq.ts';
export { createQueue } from './create-queue.ts';
export { retryDelayMs } from './backoff.ts';
export { redisAnswers } from './redis-ping.ts';
