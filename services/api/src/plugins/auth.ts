import type { FastifyRequest } from 'fastify';
import type { Role, TokenInfo } from '@plumbline/contracts';
import type { TokenRepository } from '@plumbline/store';
import { errors } from '../errors.ts';
import type { TokenBucketLimiter } from './rate-limit.ts';

/** Who is calling: the verified token. */
export interface Principal {
  tokenId: string;
  role: Role;
  name: string;
  /** Set for robot tokens: the only robot this caller may act for. */
  robotId: string | null;
}

export function principalOf(info: TokenInfo): Principal {
  return { tokenId: info.id, role: info.role, name: info.name, robotId: info.robot_id };
}

/** The actor string written to the audit log. */
export function actorOf(p: Principal): string {
  return `${p.role}:${p.name}`;
}

/**
 * Bearer authentication and role check, in one place. Failed authentications are counted per client address;
 * past the limit the address gets 429 until its bucket refills (this slows token guessing).
 */
export function createAuthenticator(tokens: TokenRepository, failures: TokenBucketLimiter) {
  return function authenticate(req: FastifyRequest, roles: readonly Role[]): Principal {
    const ip = req.ip;
    if (failures.exhausted(`auth:${ip}`)) {
      throw errors.RATE_LIMITED('failed authentications from this address', 60).with({ retry_after_s: 60 });
    }
    const header = req.headers.authorization;
    const m = typeof header === 'string' ? /^Bearer\s+(\S+)\s*$/i.exec(header) : null;
    const info = m?.[1] ? tokens.verify(m[1]) : null;
    if (!info) {
      failures.take(`auth:${ip}`);
      throw errors.UNAUTHENTICATED(header ? 'The bearer token is unknown or revoked' : 'Send Authorization: Bearer <token>');
    }
    const p = principalOf(info);
    (req as FastifyRequest & { principal?: Principal }).principal = p;
    if (!roles.includes(p.role)) throw errors.FORBIDDEN(`Role ${p.role} may not call this route (allowed: ${roles.join(', ')})`);
    return p;
  };
}

/** Robots see only their own runs; everyone else sees all. */
export function assertMayReadRobot(p: Principal, robotId: string, notFound: () => Error): void {
  // A robot asking for another robot's run gets 404, not 403, so run ids of other robots are not confirmed.
  if (p.role === 'robot' && p.robotId !== robotId) throw notFound();
}
