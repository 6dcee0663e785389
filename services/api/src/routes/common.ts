import type { FastifyRequest } from 'fastify';
import { z } from 'zod';
import type { RunSummary } from '@plumbline/contracts';
import type { ApiContext } from '../context.ts';
import { errors } from '../errors.ts';
import { assertMayReadRobot, type Principal } from '../plugins/auth.ts';

export const IdParams = z.object({ id: z.string().min(1).max(128) }).strict();

export const ALL_ROLES = ['robot', 'lead', 'integrator', 'admin'] as const;
export const READERS = ['lead', 'integrator', 'admin'] as const;

/** The run, if it exists and the caller may see it; robots asking for another robot's run get 404. */
export function visibleRun(ctx: ApiContext, p: Principal, id: string): RunSummary {
  const run = ctx.deps.store.runs.get(id);
  if (!run) throw errors.RUN_NOT_FOUND(id);
  assertMayReadRobot(p, run.robot_id, () => errors.RUN_NOT_FOUND(id));
  return run;
}

/** Per-token upload rate limit, applied after authentication. */
export function uploadRateLimit(ctx: ApiContext) {
  return (req: FastifyRequest): void => {
    const p = (req as FastifyRequest & { principal?: Principal }).principal;
    const wait = ctx.uploadLimiter.take(`upload:${p?.tokenId ?? req.ip}`);
    if (wait > 0) throw errors.RATE_LIMITED('uploads for this token', wait).with({ retry_after_s: wait });
  };
}

/** Refuses a declared Content-Length above the limit before reading anything. */
export function assertLengthWithin(req: FastifyRequest, maxBytes: number): void {
  const len = Number(req.headers['content-length']);
  if (Number.isFinite(len) && len > maxBytes) throw errors.BODY_TOO_LARGE(maxBytes);
}
