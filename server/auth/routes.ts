import type { FastifyPluginAsync } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { ADMIN, BOARD_COOKIE, requireActor, SESSION_COOKIE, SIGNED_IN } from './access.js';
import { actorName } from './service.js';
import type { HeftContext } from '../context.js';
import { toIso } from '../clock.js';
import { conflict, notFound, unauthorized } from '../errors.js';
import { freeText, idParam } from '../shared/schemas.js';
import { ROLES, type Role } from './secrets.js';
import type { MachineToken, User } from './repository.js';

const username = z.string().trim().min(2).max(40).regex(/^[a-z0-9][a-z0-9._-]*$/i, 'letters, digits, dot, dash, underscore');
const role = z.enum(ROLES as [Role, ...Role[]]);

const userView = (u: User) => ({ id: u.id, username: u.username, displayName: u.displayName, role: u.role, disabled: u.disabled, locked: u.lockedUntil !== null });
const tokenView = (t: MachineToken) => ({ id: t.id, name: t.name, kind: t.kind, lineIds: t.lineIds, createdBy: t.createdBy, createdAt: toIso(t.createdAt), revokedAt: toIso(t.revokedAt) });

export const authPlugin: FastifyPluginAsync<{ ctx: HeftContext }> = async (fastify, { ctx }) => {
  const app = fastify.withTypeProvider<ZodTypeProvider>();
  const { auth, config, repos } = ctx;

  app.post(
    '/api/session',
    {
      config: { roles: ['anyone'], rateLimit: { max: 20, timeWindow: '1 minute' } },
      schema: { body: z.strictObject({ username: z.string().min(1).max(100), secret: z.string().min(1).max(200) }) },
    },
    async (req, reply) => {
      const { sessionId, user } = await auth.signIn(req.body.username, req.body.secret);
      reply.setCookie(SESSION_COOKIE, sessionId, {
        httpOnly: true,
        sameSite: 'strict',
        secure: config.secureCookies,
        path: '/',
        maxAge: config.sessionMaxHours * 3600,
      });
      return { user: { username: user.username, displayName: user.displayName, role: user.role } };
    },
  );

  // A wall screen opens its board link once; the token then lives in an httpOnly cookie.
  app.post(
    '/api/board-session',
    {
      config: { roles: ['anyone'], rateLimit: { max: 20, timeWindow: '1 minute' } },
      schema: { body: z.strictObject({ token: z.string().min(1).max(200) }) },
    },
    async (req, reply) => {
      const actor = auth.tokenActor(req.body.token);
      if (!actor || actor.kind !== 'token' || actor.tokenKind !== 'board') throw unauthorized('that board token is not valid or was revoked');
      reply.setCookie(BOARD_COOKIE, req.body.token, { httpOnly: true, sameSite: 'strict', secure: config.secureCookies, path: '/', maxAge: 400 * 24 * 3600 });
      return { board: { name: actor.name } };
    },
  );

  app.get('/api/session', { config: { roles: SIGNED_IN } }, async (req) => {
    const actor = requireActor(req);
    if (actor.kind !== 'user') throw notFound('session');
    const user = repos.auth.user(actor.userId) as User;
    return { user: { username: user.username, displayName: user.displayName, role: user.role } };
  });

  app.delete('/api/session', { config: { roles: SIGNED_IN } }, async (req, reply) => {
    auth.signOut(requireActor(req));
    reply.clearCookie(SESSION_COOKIE, { path: '/' });
    return reply.code(204).send();
  });

  app.get('/api/users', { config: { roles: ADMIN } }, async () => ({ users: auth.users().map(userView) }));

  app.post(
    '/api/users',
    { config: { roles: ADMIN }, schema: { body: z.strictObject({ username, displayName: freeText(100), role, secret: z.string().min(1).max(200) }) } },
    async (req, reply) => {
      const user = await auth.addUser(req.body, actorName(requireActor(req)));
      return reply.code(201).send({ user: userView(user) });
    },
  );

  app.patch(
    '/api/users/:id',
    {
      config: { roles: ADMIN },
      schema: {
        params: z.strictObject({ id: idParam }),
        body: z.strictObject({ displayName: freeText(100).optional(), role: role.optional(), disabled: z.boolean().optional(), secret: z.string().min(1).max(200).optional() }),
      },
    },
    async (req) => {
      const by = actorName(requireActor(req));
      const { secret, ...change } = req.body;
      let user = auth.updateUser(req.params.id, change, by);
      if (secret !== undefined) user = await auth.setSecret(user.username, secret, by);
      return { user: userView(user) };
    },
  );

  app.get('/api/tokens', { config: { roles: ADMIN } }, async () => ({ tokens: auth.tokens().map(tokenView) }));

  app.post(
    '/api/tokens',
    {
      config: { roles: ADMIN },
      schema: {
        body: z.strictObject({
          name: freeText(100),
          kind: z.enum(['checks', 'board']),
          lineIds: z.array(idParam).max(500).default([]),
        }),
      },
    },
    async (req, reply) => {
      for (const id of req.body.lineIds) if (!repos.lines.get(id)) throw notFound(`line ${id}`);
      if (req.body.kind === 'checks' && req.body.lineIds.length === 0) throw conflict('a checks token needs at least one line');
      const { token, record } = auth.createToken(req.body, actorName(requireActor(req)));
      return reply.code(201).send({ token: { ...tokenView(record), secret: token } });
    },
  );

  app.delete('/api/tokens/:id', { config: { roles: ADMIN }, schema: { params: z.strictObject({ id: idParam }) } }, async (req) => ({
    token: tokenView(auth.revokeToken(req.params.id, actorName(requireActor(req)))),
  }));
};
