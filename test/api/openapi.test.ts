import { Validator } from '@seriousme/openapi-schema-validator';
import { Ajv2020 } from 'ajv/dist/2020.js';
import addFormats from 'ajv-formats';
import { describe, expect } from 'vitest';
import { heftTest, postCheck, setupLine } from '../helpers.js';

/** Fastify's `:name` and `*` path syntax in OpenAPI's `{name}` form, as @fastify/swagger writes it. */
const openApiPath = (url: string) => url.replace(/:(\w+)/g, '{$1}').replace(/\*$/, '{*}');

describe('the OpenAPI document', () => {
  heftTest('when the document is fetched, then it is valid OpenAPI 3.1 and holds every route with its roles and answers', async ({ heft: t }) => {
    const res = await t.app.inject({ method: 'GET', url: '/api/openapi.json' });
    expect(res.statusCode).toBe(200);
    const doc = res.json() as { openapi: string; paths: Record<string, Record<string, { description?: string; responses?: Record<string, unknown>; requestBody?: unknown; security?: unknown[] }>>; components: { securitySchemes: Record<string, unknown> } };
    expect(doc.openapi).toBe('3.1.0');
    expect((doc as unknown as { info: { description: string } }).info.description).toContain('GET /live');
    // source: the OpenAPI 3.1 schema (spec.openapis.org/oas/3.1/schema), as the validator package ships it
    const validator = new Validator();
    const verdict = await validator.validate(doc);
    expect(verdict.errors ?? []).toEqual([]);
    expect(verdict.valid).toBe(true);
    expect(validator.version).toBe('3.1');

    const missing: string[] = [];
    for (const route of t.app.routeTable) {
      // the document's own routes, and the WebSocket feed, which OpenAPI cannot describe (@fastify/websocket hides it; the info names it)
      if (route.method === 'HEAD' || route.url.startsWith('/api/docs') || route.url === '/api/openapi.json' || route.url === '/live') continue;
      const op = doc.paths[openApiPath(route.url)]?.[route.method.toLowerCase()];
      if (!op) missing.push(`${route.method} ${route.url}: not in the document`);
      else {
        if (!op.description?.startsWith('Who: ')) missing.push(`${route.method} ${route.url}: no roles in its description`);
        if (route.response && !Object.keys(op.responses ?? {}).some((code) => code.startsWith('2'))) missing.push(`${route.method} ${route.url}: its answer schema is not in the document`);
      }
    }
    expect(missing).toEqual([]);
    expect(Object.keys(doc.components.securitySchemes).sort()).toEqual(['bearer', 'boardCookie', 'session']);

    const post = doc.paths['/api/lines/{lineId}/checks']?.post as { requestBody: { content: Record<string, { example?: { weights: number[] }; schema: { required?: string[] } }> }; responses: Record<string, { content: Record<string, { schema: { properties: Record<string, unknown> } }> }> };
    const media = post.requestBody.content['application/json'];
    expect(media?.schema.required).toEqual(expect.arrayContaining(['weights', 'clientId']));
    expect(media?.example?.weights.length).toBe(5);
    expect(Object.keys(post.responses['2XX']?.content['application/json']?.schema.properties ?? post.responses['201']?.content['application/json']?.schema.properties ?? {})).toEqual(['check', 'signals', 'alerts']);
  });

  heftTest('when the document describes posting a check, then a real answer of that route matches the answer it describes', async ({ heft: t }) => {
    const { lineId } = await setupLine(t);
    const answer = await postCheck(t, lineId, [503.2, 502.6, 504.1, 503.4, 502.9]);
    expect(answer.statusCode).toBe(201);
    const doc = (await t.app.inject({ method: 'GET', url: '/api/openapi.json' })).json();
    const ajv = new Ajv2020({ strict: false, allErrors: true });
    addFormats.default(ajv);
    const responses = doc.paths['/api/lines/{lineId}/checks'].post.responses;
    const schema = (responses['2XX'] ?? responses['201']).content['application/json'].schema;
    const validate = ajv.compile({ ...schema, components: doc.components });
    expect(validate(answer.json()), JSON.stringify(validate.errors?.slice(0, 3))).toBe(true);
  });

  heftTest('when someone opens the reference page, then it is served under the same security headers, without signing in', async ({ heft: t }) => {
    const page = await t.app.inject({ method: 'GET', url: '/api/docs/' });
    expect(page.statusCode).toBe(200);
    expect(page.headers['content-type']).toContain('text/html');
    expect(String(page.headers['content-security-policy'])).toContain("script-src 'self'");
    expect(page.body).toContain('swagger-initializer.js');
    const init = await t.app.inject({ method: 'GET', url: '/api/docs/static/swagger-initializer.js' });
    expect(init.statusCode).toBe(200);
  });
});
