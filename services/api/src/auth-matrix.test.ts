import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Role } from '@plumbline/contracts';
import { createTestApp, type TestApp } from './testing.ts';

/**
 * The access table of the HTTP API plan (robot: upload as itself and read its own runs; lead: read + review;
 * integrator: read + webhooks; admin: everything). Written out here independently of the route files so a route
 * that changes its roles fails this test.
 */
const R: Role[] = ['robot'];
const ALL: Role[] = ['robot', 'lead', 'integrator', 'admin'];
const READ: Role[] = ['lead', 'integrator', 'admin'];
const EXPECTED: Record<string, { method: string; url: string; roles: Role[] | 'public'; body?: unknown }> = {
  uploadRun: { method: 'POST', url: '/api/v1/runs', roles: [...R, 'admin'] },
  listRuns: { method: 'GET', url: '/api/v1/runs', roles: ALL },
  getRun: { method: 'GET', url: '/api/v1/runs/r1', roles: ALL },
  getReport: { method: 'GET', url: '/api/v1/runs/r1/report', roles: ALL },
  getTrajectoryCsv: { method: 'GET', url: '/api/v1/runs/r1/trajectory.csv', roles: ALL },
  getBundle: { method: 'GET', url: '/api/v1/runs/r1/bundle', roles: ALL },
  reanalyseRun: { method: 'POST', url: '/api/v1/runs/r1/reanalyse', roles: ['admin'], body: {} },
  reanalyseRuns: { method: 'POST', url: '/api/v1/reanalyse', roles: ['admin'], body: {} },
  getRunAudit: { method: 'GET', url: '/api/v1/runs/r1/audit', roles: READ },
  addReview: { method: 'POST', url: '/api/v1/runs/r1/reviews', roles: ['lead', 'admin'], body: { decision: 'accept' } },
  listReviews: { method: 'GET', url: '/api/v1/runs/r1/reviews', roles: ALL },
  createUpload: {
    method: 'POST',
    url: '/api/v1/uploads',
    roles: [...R, 'admin'],
    body: { robot_id: 'kestrel-01', run_id: 'x', size_bytes: 10, sha256: 'a'.repeat(64) },
  },
  getUpload: { method: 'GET', url: '/api/v1/uploads/u1', roles: [...R, 'admin'] },
  putUploadChunk: { method: 'PUT', url: '/api/v1/uploads/u1?offset=0', roles: [...R, 'admin'] },
  finishUpload: { method: 'POST', url: '/api/v1/uploads/u1/finish', roles: [...R, 'admin'] },
  abortUpload: { method: 'DELETE', url: '/api/v1/uploads/u1', roles: [...R, 'admin'] },
  listRobots: { method: 'GET', url: '/api/v1/robots', roles: READ },
  listRobotRuns: { method: 'GET', url: '/api/v1/robots/kestrel-01/runs', roles: ALL },
  me: { method: 'GET', url: '/api/v1/me', roles: ALL },
  createToken: { method: 'POST', url: '/api/v1/tokens', roles: ['admin'], body: { role: 'lead', name: 'n' } },
  listTokens: { method: 'GET', url: '/api/v1/tokens', roles: ['admin'] },
  revokeToken: { method: 'DELETE', url: '/api/v1/tokens/t1', roles: ['admin'] },
  createWebhook: {
    method: 'POST',
    url: '/api/v1/webhooks',
    roles: ['integrator', 'admin'],
    body: { url: 'http://127.0.0.1:9/hook', events: ['run.analysed'], secret: 's'.repeat(32) },
  },
  listWebhooks: { method: 'GET', url: '/api/v1/webhooks', roles: ['integrator', 'admin'] },
  deleteWebhook: { method: 'DELETE', url: '/api/v1/webhooks/w1', roles: ['integrator', 'admin'] },
  listDeliveries: { method: 'GET', url: '/api/v1/webhooks/w1/deliveries', roles: ['integrator', 'admin'] },
  getRobotCalibration: { method: 'GET', url: '/api/v1/robots/kestrel-01/calibration', roles: ALL },
  refreshRobotCalibration: { method: 'POST', url: '/api/v1/robots/kestrel-01/calibration/refresh', roles: ['lead', 'admin'] },
  listMaintenance: { method: 'GET', url: '/api/v1/maintenance', roles: READ },
  getFeedback: { method: 'GET', url: '/api/v1/feedback', roles: READ },
  listPolicies: { method: 'GET', url: '/api/v1/policies', roles: READ },
  createPolicy: { method: 'POST', url: '/api/v1/policies', roles: ['admin'], body: {} },
  getPolicyChanges: { method: 'GET', url: '/api/v1/policies/p1/changes', roles: READ },
  applyPolicy: { method: 'POST', url: '/api/v1/policies/p1/apply', roles: ['admin'], body: {} },
  startAnalysis: { method: 'POST', url: '/api/v1/runs/r1/analysis/start', roles: ['admin'], body: { job_key: 'r1-g1' } },
  postAnalysisResult: { method: 'POST', url: '/api/v1/runs/r1/analysis', roles: ['admin'], body: { job_key: 'r1-g1', failed: { reason: 'x' } } },
  mergeGate: { method: 'POST', url: '/api/v1/merge-gate', roles: ['integrator', 'lead', 'admin'], body: { runs: ['r1'] } },
  health: { method: 'GET', url: '/healthz', roles: 'public' },
  ready: { method: 'GET', url: '/readyz', roles: 'public' },
  metrics: { method: 'GET', url: '/metrics', roles: 'public' },
  openapi: { method: 'GET', url: '/openapi.json', roles: 'public' },
  reference: { method: 'GET', url: '/reference', roles: 'public' },
};

let t: TestApp;
let documented: Map<string, string[]>;
beforeAll(async () => {
  // High limits: this test makes many requests (and many deliberate auth failures) from one address.
  t = await createTestApp({ env: { PLUMBLINE_AUTH_FAILURE_RATE_PER_MIN: '100000', PLUMBLINE_UPLOAD_RATE_PER_MIN: '100000' } });
  const doc = (await t.app.inject({ method: 'GET', url: '/openapi.json' })).json();
  documented = new Map();
  for (const methods of Object.values(doc.paths) as Array<Record<string, { operationId: string; 'x-roles': string[] }>>) {
    for (const op of Object.values(methods)) documented.set(op.operationId, op['x-roles']);
  }
});
afterAll(async () => t.close());

function call(op: (typeof EXPECTED)[string], token?: string) {
  const headers: Record<string, string> = {};
  if (token) headers.authorization = `Bearer ${token}`;
  const isRawPut = op.method === 'PUT' || (op.method === 'POST' && op.url === '/api/v1/runs');
  if (isRawPut) headers['content-type'] = 'application/octet-stream';
  return t.app.inject({
    method: op.method as 'GET',
    url: op.url,
    headers,
    ...(op.body !== undefined ? { payload: op.body as object } : isRawPut ? { payload: Buffer.from('0123456789') } : {}),
  });
}

describe('every route is in the table', () => {
  it('documents exactly the expected operations with the expected roles', () => {
    expect([...documented.keys()].sort()).toEqual(Object.keys(EXPECTED).sort());
    for (const [id, spec] of Object.entries(EXPECTED)) {
      expect(documented.get(id), id).toEqual(spec.roles === 'public' ? [] : spec.roles);
    }
  });
});

describe('auth matrix', () => {
  for (const [id, op] of Object.entries(EXPECTED)) {
    if (op.roles === 'public') {
      it(`${id} is public`, async () => {
        const r = await call(op);
        expect(r.statusCode).toBe(200);
      });
      continue;
    }
    const allowed = op.roles;
    it(`${id} without a token -> 401`, async () => {
      const r = await call(op);
      expect(r.statusCode).toBe(401);
      expect(r.json().code).toBe('UNAUTHENTICATED');
    });
    it(`${id} with a revoked-looking token -> 401`, async () => {
      const r = await call(op, 'plb_unknown_AAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAA');
      expect(r.statusCode).toBe(401);
    });
    for (const role of ['robot', 'lead', 'integrator', 'admin'] as const) {
      const ok = allowed.includes(role);
      it(`${id} as ${role} -> ${ok ? 'allowed' : '403'}`, async () => {
        const r = await call(op, t.tokens[role]);
        if (ok) {
          expect(r.statusCode, r.body).not.toBe(401);
          expect(r.statusCode, r.body).not.toBe(403);
        } else {
          expect(r.statusCode).toBe(403);
          expect(r.json().code).toBe('FORBIDDEN');
        }
      });
    }
  }
});
