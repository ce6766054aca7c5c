import type { FastifyPluginAsync } from 'fastify';
import { createRequire } from 'node:module';
import { SIGNED_IN } from '../auth/access.js';
import { RULE_CATALOGUE } from '../stats/rules.js';

const version = (createRequire(import.meta.url)('../../package.json') as { version: string }).version;

export const healthPlugin: FastifyPluginAsync = async (app) => {
  app.get('/api/health', { config: { roles: ['anyone'] } }, async () => ({ status: 'ok', version }));
  app.get('/api/rules', { config: { roles: SIGNED_IN } }, async () => ({ rules: RULE_CATALOGUE }));
};
