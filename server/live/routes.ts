import websocket from '@fastify/websocket';
import type { FastifyPluginAsync } from 'fastify';
import { z } from 'zod';
import { BOARD_READ } from '../auth/access.js';
import type { HeftContext } from '../context.js';
import type { LiveHub } from './hub.js';

declare module 'fastify' {
  interface FastifyInstance {
    liveHub: LiveHub;
  }
}

/** GET /live: the WebSocket feed, signed in by session cookie, board cookie or bearer token. */
export const livePlugin: FastifyPluginAsync<{ ctx: HeftContext; hub: LiveHub }> = async (app, { hub }) => {
  await app.register(websocket, { options: { maxPayload: 64 * 1024 } });
  app.get(
    '/live',
    { websocket: true, config: { roles: BOARD_READ }, schema: { querystring: z.strictObject({ since: z.coerce.number().int().min(0).optional() }) } },
    (socket, req) => {
      hub.attach(socket, (req.query as { since?: number }).since ?? null);
    },
  );
  // A refused upgrade (401/403) leaves the raw socket open, and a server with open sockets cannot
  // shut down: close it once the refusal has been written.
  app.addHook('onResponse', async (request, reply) => {
    if (request.headers.upgrade && reply.statusCode >= 400) request.raw.socket.destroy();
  });
  app.addHook('onClose', async () => hub.close());
};
