import type { OpenApiDocument } from './openapi.ts';

const esc = (s: unknown): string =>
  String(s).replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c] ?? c);

const anchor = (s: string): string => s.toLowerCase().replace(/[^a-z0-9]+/g, '-').replace(/^-|-$/g, '');

/** A compact one-line type for a JSON schema: `string`, `RunSummary[]`, `"a" | "b"`, `object`. */
function typeOf(s: Record<string, unknown> | undefined): string {
  if (!s) return 'any';
  if (typeof s.$ref === 'string') {
    const name = s.$ref.split('/').pop() ?? '';
    return `<a href="#schema-${anchor(name)}">${esc(name)}</a>`;
  }
  if (Array.isArray(s.enum)) return s.enum.map((v) => esc(JSON.stringify(v))).join(' | ');
  if ('const' in s) return esc(JSON.stringify(s.const));
  const alts = (s.anyOf ?? s.oneOf) as Array<Record<string, unknown>> | undefined;
  if (Array.isArray(alts)) return alts.map(typeOf).join(' | ');
  if (s.type === 'array') return `${typeOf(s.items as Record<string, unknown> | undefined)}[]`;
  if (Array.isArray(s.type)) return s.type.map((t) => esc(t)).join(' | ');
  return esc(s.type ?? 'any') + (s.format ? ` (${esc(s.format)})` : '');
}

function fieldsTable(s: Record<string, unknown>): string {
  const props = s.properties as Record<string, Record<string, unknown>> | undefined;
  if (!props) return `<p class="t">${typeOf(s)}</p>`;
  const req = new Set((s.required as string[] | undefined) ?? []);
  const rows = Object.entries(props)
    .map(
      ([k, v]) =>
        `<tr><td><code>${esc(k)}</code>${req.has(k) ? '' : ' <small>optional</small>'}</td><td>${typeOf(v)}</td><td>${esc(v.description ?? '')}</td></tr>`,
    )
    .join('');
  return `<table><tr><th>field</th><th>type</th><th>notes</th></tr>${rows}</table>`;
}

function operationHtml(path: string, method: string, op: Record<string, unknown>): string {
  const params = (op.parameters as Array<Record<string, unknown>>) ?? [];
  const paramRows = params
    .map((p) => `<tr><td><code>${esc(p.name)}</code></td><td>${esc(p.in)}${p.required ? ', required' : ''}</td><td>${typeOf(p.schema as Record<string, unknown>)}</td></tr>`)
    .join('');
  const body = op.requestBody as { content: Record<string, { schema: Record<string, unknown> }>; description?: string } | undefined;
  const bodyHtml = body
    ? `<h4>Request body</h4>${Object.entries(body.content)
        .map(([ct, c]) => `<p><code>${esc(ct)}</code></p>${ct.includes('json') ? fieldsTable(c.schema) : `<p>${esc(body.description ?? '')}</p>`}`)
        .join('')}`
    : '';
  const responses = Object.entries(op.responses as Record<string, { description: string; content?: Record<string, { schema: Record<string, unknown> }> }>)
    .map(([status, r]) => {
      const types = Object.entries(r.content ?? {})
        .map(([ct, c]) => `<code>${esc(ct)}</code> ${ct.includes('json') ? typeOf(c.schema) : ''}`)
        .join(', ');
      return `<tr><td>${esc(status)}</td><td>${types}</td><td>${esc(r.description)}</td></tr>`;
    })
    .join('');
  const roles = (op['x-roles'] as string[]).length ? (op['x-roles'] as string[]).join(', ') : 'public';
  return `<section id="op-${esc(op.operationId)}"><h3><span class="m ${esc(method)}">${esc(method.toUpperCase())}</span> <code>${esc(path)}</code></h3>
<p>${esc(op.summary)} <span class="roles">roles: ${esc(roles)}</span></p>
${paramRows ? `<h4>Parameters</h4><table><tr><th>name</th><th>in</th><th>type</th></tr>${paramRows}</table>` : ''}
${bodyHtml}<h4>Responses</h4><table><tr><th>status</th><th>content</th><th></th></tr>${responses}</table></section>`;
}

/** The readable API reference: one HTML page rendered on the server from the OpenAPI document. No scripts. */
export function renderReference(doc: OpenApiDocument): string {
  const ops: string[] = [];
  const toc: string[] = [];
  for (const [path, methods] of Object.entries(doc.paths)) {
    for (const [method, op] of Object.entries(methods as Record<string, Record<string, unknown>>)) {
      ops.push(operationHtml(path, method, op));
      toc.push(`<li><a href="#op-${esc(op.operationId)}">${esc(method.toUpperCase())} ${esc(path)}</a></li>`);
    }
  }
  const schemas = Object.entries(doc.components.schemas)
    .filter(([name]) => !name.includes('_'))
    .map(([name, s]) => `<section id="schema-${anchor(name)}"><h3>${esc(name)}</h3>${fieldsTable(s)}</section>`)
    .join('');
  const problems = doc['x-problem-codes']
    .map((p) => `<tr id="${esc(p.type.split('#')[1] ?? '')}"><td><code>${esc(p.code)}</code></td><td>${p.status}</td><td>${esc(p.title)}</td></tr>`)
    .join('');
  return `<!doctype html><html lang="en"><head><meta charset="utf-8"><title>Plumbline API reference</title>
<meta name="viewport" content="width=device-width,initial-scale=1"><style>
body{font:15px/1.45 system-ui,sans-serif;max-width:70rem;margin:2rem auto;padding:0 1rem;color:#1d2430}
code{font:13px ui-monospace,monospace}table{border-collapse:collapse;margin:.4rem 0 1rem}td,th{border:1px solid #d5dae1;padding:.25rem .5rem;text-align:left;vertical-align:top}
section{border-top:1px solid #e3e7ec;padding-top:.5rem}.m{font:bold 12px ui-monospace,monospace;padding:.1rem .4rem;border-radius:3px;background:#e8edf3}
.get{background:#dff0e6}.post{background:#e2ebfb}.put{background:#fbf1dc}.delete{background:#f8e1e1}.roles{color:#5a6675;font-size:13px;margin-left:.5rem}
</style></head><body><h1>${esc(doc.info.title)} <small>v${esc(doc.info.version)}</small></h1><p>${esc(doc.info.description)}</p>
<p>Machine-readable document: <a href="/openapi.json">/openapi.json</a> (OpenAPI ${esc(doc.openapi)}). Authenticate with <code>Authorization: Bearer &lt;token&gt;</code>.</p>
<h2>Operations</h2><ul>${toc.join('')}</ul>${ops.join('')}
<h2>Problem types</h2><table><tr><th>code</th><th>status</th><th>title</th></tr>${problems}</table>
<h2>Schemas</h2>${schemas}</body></html>`;
}
