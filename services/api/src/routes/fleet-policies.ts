import { z } from 'zod';
import { Policy, RunListQuery, StoredPolicy, VerdictChange } from '@plumbline/contracts';
import { policyHash } from '@plumbline/analysis';
import { PolicyExistsError } from '@plumbline/store';
import type { ApiContext } from '../context.ts';
import { errors } from '../errors.ts';
import { requestAnalysis } from '../ingest.ts';
import { actorOf } from '../plugins/auth.ts';
import { defineRoute } from '../plugins/route.ts';
import { READERS } from './common.ts';

const NameParams = z.object({ name: z.string().min(1).max(100) }).strict();
const VersionQuery = z.object({ version: z.string().max(27).optional() }).strict();
const Changes = z.object({ policy: StoredPolicy, previous: StoredPolicy.nullable(), changes: z.array(VerdictChange) }).strict();
const Apply = RunListQuery.omit({ sort: true, limit: true, cursor: true })
  .extend({ version: z.string().max(27).optional(), max_runs: z.number().int().min(1).max(10_000).default(1000) })
  .strict();

/**
 * Versioned policies: stored documents (name + version + hash), applying a version to past runs through the queue,
 * and the runs whose verdict moved under it. A job names a stored version as `name@version`.
 */
export function registerPolicyRoutes(ctx: ApiContext): void {
  const { store, queue } = ctx.deps;
  const stored = (name: string, version?: string) => {
    const p = store.policies.get(name, version);
    if (!p) throw errors.POLICY_NOT_FOUND(version === undefined ? name : `${name}@${version}`);
    return p;
  };
  defineRoute(
    ctx,
    { method: 'GET', url: '/api/v1/policies', operationId: 'listPolicies', summary: 'Stored policy versions', tag: 'policies', auth: READERS, responses: { 200: z.array(StoredPolicy) } },
    async () => store.policies.list(),
  );
  defineRoute(
    ctx,
    { method: 'POST', url: '/api/v1/policies', operationId: 'createPolicy', summary: 'Store a new policy version (name + version are immutable)', tag: 'policies', auth: ['admin'], body: Policy, responses: { 201: StoredPolicy } },
    async (_req, { body, principal }, reply) => {
      if (body.name.includes('@') || body.version.includes('@')) throw errors.VALIDATION_FAILED('body', 'name and version must not contain "@"');
      try {
        const saved = store.policies.create(body, policyHash(body), actorOf(principal), ctx.deps.clock.now());
        store.audit.append(actorOf(principal), 'policy.created', `policy:${saved.name}@${saved.version}`, { hash: saved.hash });
        reply.code(201);
        return saved;
      } catch (err) {
        if (err instanceof PolicyExistsError) throw errors.POLICY_EXISTS(body.name, body.version);
        throw err;
      }
    },
  );
  defineRoute(
    ctx,
    { method: 'GET', url: '/api/v1/policies/:name/changes', operationId: 'getPolicyChanges', summary: 'Runs whose verdict moved when re-analysed under a policy version', tag: 'policies', auth: READERS, params: NameParams, query: VersionQuery, responses: { 200: Changes } },
    async (_req, { params, query }) => {
      const policy = stored(params.name, query.version);
      const label = `${policy.name}@${policy.version}`;
      // A bare name in a job resolves to the latest version: count it only for the latest.
      const latest = store.policies.get(policy.name);
      const names = latest?.version === policy.version ? [label, policy.name] : [label];
      return { policy, previous: store.policies.previous(policy.name, policy.version), changes: store.feedback.verdictChanges({ policies: names }) };
    },
  );
  defineRoute(
    ctx,
    { method: 'POST', url: '/api/v1/policies/:name/apply', operationId: 'applyPolicy', summary: 'Re-analyse past runs (filtered) under a policy version through the queue', tag: 'policies', auth: ['admin'], params: NameParams, body: Apply, responses: { 202: z.object({ policy: z.string(), queued: z.number().int() }).strict() } },
    async (_req, { params, body, principal }, reply) => {
      const { version, max_runs, ...filter } = body;
      const policy = stored(params.name, version);
      const label = `${policy.name}@${policy.version}`;
      let queued = 0;
      for (const id of store.runs.idsMatching({ ...filter, status: filter.status ?? 'done' }, max_runs)) if (await requestAnalysis(store, queue, id, label)) queued++;
      store.audit.append(actorOf(principal), 'policy.applied', `policy:${label}`, { filter, queued });
      reply.code(202);
      return { policy: label, queued };
    },
  );
}
