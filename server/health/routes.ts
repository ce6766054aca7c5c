import type { FastifyPluginAsync } from 'fastify';
import { readFileSync } from 'node:fs';
import type { BackupReport } from '../db/backup.js';
import { fromRoot } from '../paths.js';
import { SIGNED_IN } from '../auth/access.js';
import { RULE_CATALOGUE } from '../stats/rules.js';
import { resolveRuleSet } from '../stats/rule-set.js';
import { healthAnswer, plantAnswer, rulesAnswer } from './contract.js';

export const VERSION = (JSON.parse(readFileSync(fromRoot('package.json'), 'utf8')) as { version: string }).version;

export const healthPlugin: FastifyPluginAsync<{ plant: { name: string; timeZone: string }; lastBackup: () => BackupReport | null }> = async (app, { plant, lastBackup }) => {
  app.get('/api/health', { config: { roles: ['anyone'] }, schema: { response: { 200: healthAnswer } } }, async () => {
    const b = lastBackup();
    return { status: 'ok' as const, version: VERSION, backup: b ? { file: b.file, at: new Date(b.at).toISOString(), bytes: b.bytes, checks: b.checks } : null };
  });
  // the pages need the plant's time zone before anyone signs in
  app.get('/api/plant', { config: { roles: ['anyone'] }, schema: { response: { 200: plantAnswer } } }, async () => ({ plant }));
  app.get('/api/rules', { config: { roles: SIGNED_IN }, schema: { response: { 200: rulesAnswer } } }, async () => {
    const { runLength, ewma, cusum } = resolveRuleSet();
    return { rules: RULE_CATALOGUE, defaults: { runLength, ewma, cusum } };
  });
};
