import fastifyStatic from '@fastify/static';
import type { FastifyPluginAsync } from 'fastify';
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { WEB_DIST } from './build.js';

const PAGES: Record<string, string> = {
  '/': 'index.html',
  '/entry': 'entry/index.html',
  '/board': 'board/index.html',
  '/review': 'review/index.html',
  '/setup': 'setup/index.html',
};

/** Serves the built pages. The pages are public; every piece of data they show needs a sign-in. */
export const webPlugin: FastifyPluginAsync<{ dist?: string }> = async (app, options) => {
  const root = options.dist ?? WEB_DIST;
  await app.register(fastifyStatic, { root, serve: false });
  for (const [url, file] of Object.entries(PAGES)) {
    app.get(url, { config: { roles: ['anyone'] } }, async (_req, reply) => {
      if (!existsSync(join(root, file))) {
        return reply.code(503).type('text/plain').send('The pages are not built yet: run `npm run build:web` (npm run demo builds them).');
      }
      return reply.header('cache-control', 'no-cache').sendFile(file);
    });
  }
  app.get('/assets/*', { config: { roles: ['anyone'] } }, async (req, reply) => {
    const rest = (req.params as { '*': string })['*'];
    return reply.header('cache-control', 'public, max-age=31536000, immutable').sendFile(join('assets', rest));
  });
};
