import type { FastifyError, FastifyInstance } from 'fastify';
import { hasZodFastifySchemaValidationErrors } from 'fastify-type-provider-zod';
import { DomainError, type FieldIssue } from './errors.js';

interface ZodIssueLike {
  instancePath: string;
  message: string;
}

function fieldOf(path: string, context: string | undefined): string {
  const field = path.replace(/^\//, '').split('/').filter(Boolean).join('.');
  return field || context || 'body';
}

const SQLITE_UNAVAILABLE: Record<string, string> = {
  SQLITE_FULL: 'the database disk is full: nothing was written; free space on the server and try again',
  SQLITE_BUSY: 'the database is locked by another process: nothing was written; try again shortly',
  SQLITE_LOCKED: 'the database is locked: nothing was written; try again shortly',
  SQLITE_IOERR: 'the database could not write to disk: nothing was written',
  SQLITE_READONLY: 'the database is read-only: nothing was written',
};

/** One error handler: a clear message naming each bad field for 4xx; a generic message (and a log line) for 5xx. */
export function installErrorHandler(app: FastifyInstance): void {
  app.setErrorHandler((err: FastifyError & { code?: string }, request, reply) => {
    if (hasZodFastifySchemaValidationErrors(err)) {
      const issues: FieldIssue[] = (err.validation as unknown as ZodIssueLike[]).map((i) => ({
        field: fieldOf(i.instancePath, err.validationContext),
        message: i.message,
      }));
      return reply.code(400).send({
        error: 'bad-request',
        message: issues.map((i) => `${i.field}: ${i.message}`).join('; '),
        issues,
      });
    }
    if (err instanceof DomainError) {
      const retryAfter = err.details?.retryAfterSeconds;
      if (typeof retryAfter === 'number') reply.header('retry-after', String(retryAfter));
      return reply.code(err.statusCode).send({ error: err.code, message: err.message, issues: err.issues, ...err.details });
    }
    const sqliteCode = typeof err.code === 'string' ? Object.keys(SQLITE_UNAVAILABLE).find((c) => err.code === c || err.code?.startsWith(`${c}_`)) : undefined;
    if (sqliteCode) {
      request.log.error({ err }, 'database unavailable');
      return reply.code(503).send({ error: 'unavailable', message: SQLITE_UNAVAILABLE[sqliteCode], issues: [] });
    }
    if (err.statusCode === 429) {
      return reply.code(429).send({ error: 'too-many-requests', message: err.message, issues: [] });
    }
    if (typeof err.statusCode === 'number' && err.statusCode >= 400 && err.statusCode < 500) {
      return reply.code(err.statusCode).send({ error: 'bad-request', message: err.message, issues: [{ field: 'body', message: err.message }] });
    }
    request.log.error({ err }, 'unexpected error');
    return reply.code(500).send({ error: 'internal', message: 'something went wrong on the server; it was logged', issues: [] });
  });
  app.setNotFoundHandler((request, reply) => {
    reply.code(404).send({ error: 'not-found', message: `no route ${request.method} ${request.url.split('?')[0]}`, issues: [] });
  });
}
