import { z } from 'zod';
import type { AnyRouteSpec, RawContent, RouteRegistry } from './route-types.ts';
import { errors, problemType } from '../errors.ts';
import { Problem } from '@plumbline/contracts';

type JsonSchema = Record<string, unknown>;
type AnySpec = AnyRouteSpec;

export interface OpenApiDocument {
  openapi: '3.1.0';
  info: { title: string; version: string; description: string };
  servers: Array<{ url: string }>;
  paths: Record<string, Record<string, unknown>>;
  components: { schemas: Record<string, JsonSchema>; securitySchemes: Record<string, unknown> };
  'x-problem-codes': Array<{ code: string; status: number; title: string; type: string }>;
}

const ROLE_NOTE = 'Roles allowed';

function isRaw(x: z.ZodType | RawContent): x is RawContent {
  return (x as RawContent).contentTypes !== undefined;
}

/** `/runs/:id/report` -> `/runs/{id}/report` */
export function toOpenApiPath(url: string): string {
  return url.replace(/:([A-Za-z_][A-Za-z0-9_]*)/g, '{$1}');
}

/**
 * Collects route specs and builds an OpenAPI 3.1 document from their zod schemas (zod 4 `z.toJSONSchema`).
 * Response schemas go through one registry so shared contract schemas (RunSummary, Report, …) become
 * `#/components/schemas/*` references; parameters and request bodies are inlined in their input form
 * (defaults make fields optional, as a client sees them).
 */
export class OpenApiRegistry implements RouteRegistry {
  private readonly specs: AnySpec[] = [];
  private readonly named = z.registry<{ id: string }>();
  private cached: OpenApiDocument | null = null;

  constructor(namedSchemas: Record<string, z.ZodType>) {
    for (const [id, schema] of Object.entries(namedSchemas)) this.named.add(schema, { id });
  }

  add(spec: AnySpec): void {
    this.specs.push(spec);
    this.cached = null;
  }

  routes(): ReadonlyArray<Pick<AnySpec, 'method' | 'url' | 'auth' | 'operationId'>> {
    return this.specs;
  }

  document(serverUrl: string): OpenApiDocument {
    if (this.cached) return this.cached;
    const responseIds = new Map<z.ZodType, string>();
    for (const s of this.specs) {
      for (const [status, r] of Object.entries(s.responses)) {
        if (isRaw(r) || this.named.has(r) || responseIds.has(r)) continue;
        const id = `${s.operationId}_${status}`;
        responseIds.set(r, id);
        this.named.add(r, { id });
      }
    }
    const gen = z.toJSONSchema(this.named, {
      target: 'draft-2020-12',
      io: 'output',
      unrepresentable: 'any',
      uri: (id) => `#/components/schemas/${id}`,
    }) as { schemas: Record<string, JsonSchema> };
    const schemas: Record<string, JsonSchema> = {};
    for (const [id, s] of Object.entries(gen.schemas)) {
      const { $schema: _drop, $id: _id, ...rest } = s;
      schemas[id] = rest;
    }
    const paths: OpenApiDocument['paths'] = {};
    for (const s of this.specs) {
      const p = toOpenApiPath(s.url);
      paths[p] ??= {};
      paths[p][s.method.toLowerCase()] = this.operation(s);
    }
    this.cached = {
      openapi: '3.1.0',
      info: {
        title: 'Plumbline API',
        version: '1',
        description:
          'Triage of robot mapping runs. Errors are RFC 9457 application/problem+json with a stable `type` per `code`.',
      },
      servers: [{ url: serverUrl }],
      paths,
      components: {
        schemas,
        securitySchemes: { bearer: { type: 'http', scheme: 'bearer', description: 'Plumbline API token (plb_…)' } },
      },
      'x-problem-codes': Object.values(errors).map((e) => ({ code: e.code, status: e.statusCode, title: e.title, type: problemType(e.code) })),
    };
    return this.cached;
  }

  private ref(schema: z.ZodType): JsonSchema {
    const meta = this.named.get(schema);
    if (meta) return { $ref: `#/components/schemas/${meta.id}` };
    return inline(schema, 'output');
  }

  private operation(s: AnySpec): Record<string, unknown> {
    const parameters = [...params(s.params, 'path'), ...params(s.query, 'query')];
    const responses: Record<string, unknown> = {};
    for (const [status, r] of Object.entries(s.responses)) {
      const content = isRaw(r)
        ? Object.fromEntries(r.contentTypes.map((t) => [t, { schema: { type: 'string', format: 'binary' } }]))
        : { 'application/json': { schema: this.ref(r) } };
      responses[status] = { description: isRaw(r) ? r.description : `${status} response`, content };
    }
    responses.default = {
      description: 'Error (RFC 9457 problem details; see x-problem-codes)',
      content: { 'application/problem+json': { schema: { $ref: '#/components/schemas/Problem' } } },
    };
    const op: Record<string, unknown> = {
      operationId: s.operationId,
      summary: s.summary,
      tags: [s.tag],
      description: s.auth === 'public' ? 'No authentication.' : `${ROLE_NOTE}: ${s.auth.join(', ')}.`,
      'x-roles': s.auth === 'public' ? [] : [...s.auth],
      security: s.auth === 'public' ? [] : [{ bearer: [] }],
      parameters,
      responses,
    };
    if (s.body) op.requestBody = { required: true, content: { 'application/json': { schema: inline(s.body, 'input') } } };
    else if (s.rawBody)
      op.requestBody = {
        required: true,
        description: s.rawBody.description,
        content: Object.fromEntries(s.rawBody.contentTypes.map((t) => [t, { schema: { type: 'string', format: 'binary' } }])),
      };
    return op;
  }
}

function inline(schema: z.ZodType, io: 'input' | 'output'): JsonSchema {
  const { $schema: _drop, ...rest } = z.toJSONSchema(schema, { target: 'draft-2020-12', io, unrepresentable: 'any' }) as JsonSchema;
  return rest;
}

function params(schema: z.ZodType | undefined, where: 'path' | 'query'): unknown[] {
  if (!schema) return [];
  const js = inline(schema, 'input') as { properties?: Record<string, JsonSchema>; required?: string[] };
  const required = new Set(js.required ?? []);
  return Object.entries(js.properties ?? {}).map(([name, s]) => ({
    name,
    in: where,
    required: where === 'path' || required.has(name),
    ...(typeof s.description === 'string' ? { description: s.description } : {}),
    schema: s,
  }));
}

/** Named schemas shared by many responses; they become components. */
export function sharedSchemas(c: typeof import('@plumbline/contracts')): Record<string, z.ZodType> {
  return {
    Problem,
    RunSummary: c.RunSummary,
    RunListPage: c.RunListPage,
    RunDetail: c.RunDetail,
    Report: c.Report,
    Review: c.Review,
    AuditEntry: c.AuditEntry,
    RobotSummary: c.RobotSummary,
    UploadSession: c.UploadSession,
    TokenInfo: c.TokenInfo,
    WebhookInfo: c.WebhookInfo,
    WebhookDelivery: c.WebhookDelivery,
  };
}
