import type { FastifyPluginAsync } from 'fastify';
import { createRequire } from 'node:module';
import { SIGNED_IN } from '../auth/access.js';
import { RULE_CATALOGUE } from '../stats/rules.js';
import { healthAnswer, plantAnswer, rulesAnswer } from './contract.js';

const version = (createRequire(import.meta.url)('../../package.json') as { version: string }).version;

export const healthPlugin: FastifyPluginAsync<{ plant: { name: string; timeZone: string } }> = async (app, { plant }) => {
  app.get('/api/health', { config: { roles: ['anyone'] }, schema: { response: { 200: healthAnswer } } }, async () => ({ status: 'ok' as const, version }));
  // the pages need the plant's time zone before anyone signs in
  app.get('/api/plant', { config: { roles: ['anyone'] }, schema: { response: { 200: plantAnswer } } }, async () => ({ plant }));
  app.get('/api/rules', { config: { roles: SIGNED_IN }, schema: { response: { 200: rulesAnswer } } }, async () => ({ rules: RULE_CATALOGUE }));
};
