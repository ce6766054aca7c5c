import type { FastifyPluginAsync } from 'fastify';
import { createRequire } from 'node:module';
import { SIGNED_IN } from '../auth/access.js';
import { RULE_CATALOGUE } from '../stats/rules.js';

const version = (createRequire(import.meta.url)('../../package.json') as { version: string }).version;

export const healthPlugin: FastifyPluginAsync<{ plant: { name: string; timeZone: string } }> = async (app, { plant }) => {
  app.get('/api/health', { config: { roles: ['anyone'] } }, async () => ({ status: 'ok', version }));
  // the pages need the plant's time zone before anyone signs in
  app.get('/api/plant', { config: { roles: ['anyone'] } }, async () => ({ plant }));
  app.get('/api/rules', { config: { roles: SIGNED_IN } }, async () => ({ rules: RULE_CATALOGUE }));
};
