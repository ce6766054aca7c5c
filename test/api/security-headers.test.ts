import { IncomingMessage, ServerResponse } from 'node:http';
import { Socket } from 'node:net';
import helmet from 'helmet';
import { expect, test } from 'vitest';
import { securityHeaders } from '../../server/shared/security-headers.js';
import { heftTest, postCheck, setupLine } from '../helpers.js';

/** What helmet's own middleware sets on a real Node response, for the options the server uses. */
function helmetOnARealResponse(secureCookies: boolean): Record<string, string> {
  const req = new IncomingMessage(new Socket());
  const res = new ServerResponse(req);
  const middleware = helmet({
    contentSecurityPolicy: { useDefaults: true, directives: { 'upgrade-insecure-requests': secureCookies ? [] : null, 'connect-src': ["'self'", 'ws:', 'wss:'] } },
    hsts: secureCookies,
  });
  middleware(req, res, () => undefined);
  return Object.fromEntries(Object.entries(res.getHeaders()).map(([k, v]) => [k, Array.isArray(v) ? v.join(', ') : String(v)]));
}

test('when the headers are worked out once, then they are exactly what helmet sets per request, with HSTS only behind secure cookies', () => {
  for (const secureCookies of [false, true]) {
    expect(securityHeaders({ secureCookies })).toEqual(helmetOnARealResponse(secureCookies));
  }
  expect(securityHeaders({ secureCookies: false })['strict-transport-security']).toBeUndefined();
  expect(securityHeaders({ secureCookies: true })['strict-transport-security']).toMatch(/max-age=\d+/);
});

heftTest('when a check is answered, then the answer carries the security headers', async ({ heft }) => {
  const { lineId } = await setupLine(heft);
  const res = await postCheck(heft, lineId, [503, 502.5, 503.5, 503, 502.8]);
  expect(res.statusCode).toBe(201);
  const expected = securityHeaders({ secureCookies: false });
  for (const [name, value] of Object.entries(expected)) expect(res.headers[name], name).toBe(value);
});
