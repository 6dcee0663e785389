import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTestApp, type TestApp } from './testing.ts';

let t: TestApp;
let doc: {
  openapi: string;
  paths: Record<string, Record<string, { operationId: string; parameters: Array<{ name: string; in: string; required: boolean }>; responses: Record<string, unknown> }>>;
  components: { schemas: Record<string, unknown> };
};
beforeAll(async () => {
  t = await createTestApp();
  doc = (await t.app.inject({ method: 'GET', url: '/openapi.json' })).json();
});
afterAll(async () => t.close());

function refs(node: unknown, out: string[] = []): string[] {
  if (Array.isArray(node)) for (const x of node) refs(x, out);
  else if (node && typeof node === 'object') {
    for (const [k, v] of Object.entries(node)) {
      if (k === '$ref' && typeof v === 'string') out.push(v);
      else refs(v, out);
    }
  }
  return out;
}

// Structure checked against the OpenAPI Specification 3.1.0 (spec.openapis.org/oas/v3.1.0): path templates use
// {name}, every templated name has a required `in: path` parameter, operationIds are unique, $refs resolve.
describe('OpenAPI document', () => {
  it('is version 3.1 with unique operation ids', () => {
    expect(doc.openapi).toBe('3.1.0');
    const ids = Object.values(doc.paths).flatMap((m) => Object.values(m).map((o) => o.operationId));
    expect(new Set(ids).size).toBe(ids.length);
    expect(ids.length).toBeGreaterThanOrEqual(31);
  });
  it('declares every path template name as a required path parameter', () => {
    for (const [path, methods] of Object.entries(doc.paths)) {
      expect(path).not.toMatch(/:/);
      const names = [...path.matchAll(/\{(\w+)\}/g)].map((m) => m[1]);
      for (const op of Object.values(methods)) {
        const inPath = op.parameters.filter((p) => p.in === 'path');
        expect(inPath.map((p) => p.name).sort(), `${path} ${op.operationId}`).toEqual([...names].sort());
        expect(inPath.every((p) => p.required)).toBe(true);
      }
    }
  });
  it('resolves every $ref to a component', () => {
    const all = refs(doc);
    expect(all.length).toBeGreaterThan(20);
    for (const r of all) {
      expect(r).toMatch(/^#\/components\/schemas\//);
      expect(doc.components.schemas[r.slice('#/components/schemas/'.length)], r).toBeDefined();
    }
  });
  it('describes the contract schemas, e.g. RunSummary fields and the Report verdict enum', () => {
    const rs = doc.components.schemas.RunSummary as { properties: Record<string, unknown>; required: string[] };
    expect(rs.required).toEqual(expect.arrayContaining(['id', 'robot_id', 'run_id', 'status', 'sha256', 'verdict']));
    const rep = doc.components.schemas.Report as { properties: { verdict: { enum?: string[]; $ref?: string } } };
    expect(JSON.stringify(rep.properties.verdict)).toContain('doubtful');
    const list = doc.paths['/api/v1/runs']?.get;
    expect(list?.parameters.map((p) => p.name)).toEqual(expect.arrayContaining(['robot_id', 'verdict', 'sort', 'limit', 'cursor']));
  });
});

describe('HTML reference', () => {
  it('lists every operation and every problem code, without external resources', async () => {
    const r = await t.app.inject({ method: 'GET', url: '/reference' });
    expect(r.statusCode).toBe(200);
    expect(r.headers['content-type']).toMatch(/^text\/html/);
    for (const methods of Object.values(doc.paths)) for (const op of Object.values(methods)) expect(r.body).toContain(`id="op-${op.operationId}"`);
    expect(r.body).toContain('id="problem-run-not-found"');
    expect(r.body).not.toMatch(/<script|https?:\/\/(?!127)/);
  });
});
