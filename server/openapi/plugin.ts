import swagger from '@fastify/swagger';
import swaggerUi from '@fastify/swagger-ui';
import type { FastifyInstance, FastifySchema } from 'fastify';
import { jsonSchemaTransform, jsonSchemaTransformObject } from 'fastify-type-provider-zod';
import { BOARD_COOKIE, PUBLIC_DOCS, SESSION_COOKIE, type Access } from '../auth/access.js';

/** Who a role list lets in, in words for the reference page. */
function whoWords(roles: readonly Access[]): string {
  if (roles.includes('anyone')) return 'anyone, signed in or not';
  const names: Record<Access, string> = {
    anyone: 'anyone',
    operator: 'operators',
    supervisor: 'supervisors',
    quality: 'quality staff',
    admin: 'admins',
    'board-token': 'a board token (a wall screen)',
    'checks-token': 'a checks token for that line (a scale or checkweigher)',
  };
  return roles.map((r) => names[r]).join(', ');
}

/** Answers that are not one JSON document, described in words. */
const OTHER_ANSWERS: Record<string, { description: string; content?: Record<string, object> }> = {
  '/api/exports/:file': {
    description: 'events, checks or packs of the range as a file, streamed row by row (API.md, "Exports")',
    content: { 'text/csv': { schema: { type: 'string' } }, 'application/json': { schema: { type: 'array', items: { type: 'object' } } } },
  },
};

const CHECK_EXAMPLE = { weights: [503.2, 502.6, 504.1, 503.4, 502.9], clientId: '0f8fa3c4-2b61-4f47-9a0e-3c1f6de0a2b7' };

/**
 * The OpenAPI 3.1 document, made from the routes' own zod schemas (request and answer), at
 * GET /api/openapi.json, and a reference page at /api/docs. Registered before the feature plugins,
 * so it sees every route as it is added.
 */
export async function registerOpenApi(app: FastifyInstance, version: string): Promise<void> {
  await app.register(swagger, {
    openapi: {
      openapi: '3.1.0',
      info: {
        title: 'Heft API',
        version,
        description:
          'Check-weighing entries, alerts, limits and the week review. Times are ISO 8601 UTC; weights are in the product\'s unit. ' +
          'Each operation says who may call it. docs/api.md is the narrative guide. The live feed is a WebSocket at GET /live ' +
          '(numbered messages, resumable with ?since=<seq>; docs/api.md, "Live feed"), which OpenAPI does not describe. Net-quantity figures are an aid: the local ' +
          "weights-and-measures rules and the authority's reference test prevail.",
      },
      components: {
        securitySchemes: {
          session: { type: 'apiKey', in: 'cookie', name: SESSION_COOKIE, description: 'the session cookie POST /api/session sets' },
          boardCookie: { type: 'apiKey', in: 'cookie', name: BOARD_COOKIE, description: "a wall screen's board token, kept in a cookie by POST /api/board-session" },
          bearer: { type: 'http', scheme: 'bearer', description: 'a machine token (checks or board) made by an admin' },
        },
      },
    },
    transform: (args) => {
      const { schema, url } = jsonSchemaTransform(args) as { schema: FastifySchema & Record<string, unknown>; url: string };
      const roles = (args.route.config as { roles?: Access[] } | undefined)?.roles ?? ['anyone'];
      const described: FastifySchema & Record<string, unknown> = {
        ...schema,
        tags: [args.url.split('/')[2] ?? 'pages'],
        description: `Who: ${whoWords(roles)}.`,
        security: roles.includes('anyone') ? [] : [{ session: [] }, { boardCookie: [] }, { bearer: [] }],
      };
      const other = OTHER_ANSWERS[args.url];
      if (other) described.response = { 200: other };
      if (args.url === '/api/lines/:lineId/checks' && args.route.method === 'POST') {
        (described.body as Record<string, unknown>).examples = [CHECK_EXAMPLE];
      }
      return { schema: described, url };
    },
    transformObject: jsonSchemaTransformObject,
  });
  await app.register(swaggerUi, {
    routePrefix: PUBLIC_DOCS,
    uiConfig: { validatorUrl: null, docExpansion: 'list', deepLinking: true },
    staticCSP: false,
  });
  app.get('/api/openapi.json', { config: { roles: ['anyone'] }, schema: { hide: true } }, async () => app.swagger());
}
