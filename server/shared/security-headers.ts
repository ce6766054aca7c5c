import type { IncomingMessage, ServerResponse } from 'node:http';
import type { FastifyInstance } from 'fastify';
import helmet from 'helmet';

/**
 * The security headers helmet chooses for our options, worked out once. Our policy has no per-request
 * parts (no nonces), so every answer carries the same set; helmet stays the one that decides it.
 */
export function securityHeaders(options: { secureCookies: boolean }): Record<string, string> {
  const middleware = helmet({
    contentSecurityPolicy: {
      useDefaults: true,
      directives: {
        'upgrade-insecure-requests': options.secureCookies ? [] : null,
        'connect-src': ["'self'", 'ws:', 'wss:'],
      },
    },
    hsts: options.secureCookies,
  });
  const headers: Record<string, string> = {};
  const recorder = {
    setHeader(name: string, value: string | number | readonly string[]) {
      headers[name.toLowerCase()] = Array.isArray(value) ? value.join(', ') : String(value);
    },
    removeHeader(name: string) {
      delete headers[name.toLowerCase()];
    },
  };
  let failure: unknown = null;
  middleware({} as IncomingMessage, recorder as unknown as ServerResponse, (error?: unknown) => {
    failure = error ?? null;
  });
  if (failure) throw failure instanceof Error ? failure : new Error(String(failure));
  return headers;
}

/**
 * Helmet's headers on every answer. Running helmet's middleware chain per request (the Fastify
 * wrapper even built a new helmet each time, parsing the whole Content-Security-Policy again) was
 * about 5 % of the server's time under a stream of checks, measured; one `reply.headers` call is not.
 */
export function installSecurityHeaders(app: FastifyInstance, options: { secureCookies: boolean }): void {
  const headers = securityHeaders(options);
  app.addHook('onRequest', (_request, reply, done) => {
    reply.headers(headers);
    done();
  });
}
