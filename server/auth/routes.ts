import type { FastifyPluginAsync } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { ADMIN, BOARD_COOKIE, requireActor, SESSION_COOKIE, SIGNED_IN, SUPERVISOR_UP } from './access.js';
import { actorName } from './service.js';
import { EVERY_USER } from './throttle.js';
import type { HeftContext } from '../context.js';
import { toIso } from '../clock.js';
import { conflict, notFound, unauthorized } from '../errors.js';
import {
  boardSessionAnswer,
  boardSignInBody,
  clearedAnswer,
  clearLocksBody,
  idParams,
  lockListAnswer,
  newTokenAnswer,
  newTokenBody,
  newUserBody,
  sessionAnswer,
  signInBody,
  tokenAnswer,
  tokenListAnswer,
  userAnswer,
  userListAnswer,
  userPatch,
  type TokenView,
  type UserView,
} from './contract.js';
import type { MachineToken, User } from './repository.js';

/** `locked`: wrong sign-ins have locked this user out at one device or more (other devices still work). */
const userView = (u: User, lockedNames: ReadonlySet<string>): UserView => ({
  id: u.id,
  username: u.username,
  displayName: u.displayName,
  role: u.role,
  disabled: u.disabled,
  locked: lockedNames.has(u.username.toLowerCase()),
  lastSignInAt: toIso(u.lastSignInAt),
});
const tokenView = (t: MachineToken): TokenView => ({ id: t.id, name: t.name, kind: t.kind, lineIds: t.lineIds, createdBy: t.createdBy, createdAt: toIso(t.createdAt), revokedAt: toIso(t.revokedAt), lastUsedAt: toIso(t.lastUsedAt) });

export const authPlugin: FastifyPluginAsync<{ ctx: HeftContext }> = async (fastify, { ctx }) => {
  const app = fastify.withTypeProvider<ZodTypeProvider>();
  const { auth, config, repos } = ctx;

  app.post(
    '/api/session',
    {
      config: { roles: ['anyone'], rateLimit: { max: config.signInPerMinute, timeWindow: '1 minute' } },
      schema: { body: signInBody, response: { 200: sessionAnswer } },
    },
    async (req, reply) => {
      const { sessionId, user } = await auth.signIn(req.body.username, req.body.secret, req.ip);
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
      schema: { body: boardSignInBody, response: { 200: boardSessionAnswer } },
    },
    async (req, reply) => {
      const actor = auth.tokenActor(req.body.token);
      if (!actor || actor.kind !== 'token' || actor.tokenKind !== 'board') throw unauthorized('that board token is not valid or was revoked');
      reply.setCookie(BOARD_COOKIE, req.body.token, { httpOnly: true, sameSite: 'strict', secure: config.secureCookies, path: '/', maxAge: 400 * 24 * 3600 });
      return { board: { name: actor.name } };
    },
  );

  app.get('/api/session', { config: { roles: SIGNED_IN }, schema: { response: { 200: sessionAnswer } } }, async (req) => {
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

  const lockedNames = () => new Set(auth.signInLocks().filter((l) => l.locked).map((l) => l.username));

  app.get('/api/users', { config: { roles: ADMIN }, schema: { response: { 200: userListAnswer } } }, async () => {
    const locked = lockedNames();
    return { users: auth.users().map((u) => userView(u, locked)) };
  });

  const lockView = (l: ReturnType<typeof auth.signInLocks>[number]) => ({
    username: l.username === EVERY_USER ? null : l.username,
    address: l.address,
    failures: l.failures,
    lastFailureAt: toIso(l.lastFailureAt),
    lockedUntil: l.locked ? toIso(l.lockedUntil) : null,
  });

  app.get('/api/sign-in-locks', { config: { roles: SUPERVISOR_UP }, schema: { response: { 200: lockListAnswer } } }, async () => ({ locks: auth.signInLocks().map(lockView) }));

  app.post(
    '/api/sign-in-locks/clear',
    {
      config: { roles: SUPERVISOR_UP },
      schema: { body: clearLocksBody, response: { 200: clearedAnswer } },
    },
    async (req) => ({ cleared: auth.clearSignInLocks(req.body, actorName(requireActor(req))) }),
  );

  app.post(
    '/api/users',
    { config: { roles: ADMIN }, schema: { body: newUserBody, response: { 201: userAnswer } } },
    async (req, reply) => {
      const user = await auth.addUser(req.body, actorName(requireActor(req)));
      return reply.code(201).send({ user: userView(user, lockedNames()) });
    },
  );

  app.patch(
    '/api/users/:id',
    {
      config: { roles: ADMIN },
      schema: { params: idParams, body: userPatch, response: { 200: userAnswer } },
    },
    async (req) => {
      const by = actorName(requireActor(req));
      const { secret, ...change } = req.body;
      let user = auth.updateUser(req.params.id, change, by);
      if (secret !== undefined) user = await auth.setSecret(user.username, secret, by);
      return { user: userView(user, lockedNames()) };
    },
  );

  app.get('/api/tokens', { config: { roles: ADMIN }, schema: { response: { 200: tokenListAnswer } } }, async () => ({ tokens: auth.tokens().map(tokenView) }));

  app.post(
    '/api/tokens',
    {
      config: { roles: ADMIN },
      schema: { body: newTokenBody, response: { 201: newTokenAnswer } },
    },
    async (req, reply) => {
      for (const id of req.body.lineIds) if (!repos.lines.get(id)) throw notFound(`line ${id}`);
      if (req.body.kind === 'checks' && req.body.lineIds.length === 0) throw conflict('a checks token needs at least one line');
      const { token, record } = auth.createToken(req.body, actorName(requireActor(req)));
      return reply.code(201).send({ token: { ...tokenView(record), secret: token } });
    },
  );

  app.delete('/api/tokens/:id', { config: { roles: ADMIN }, schema: { params: idParams, response: { 200: tokenAnswer } } }, async (req) => ({
    token: tokenView(auth.revokeToken(req.params.id, actorName(requireActor(req)))),
  }));
};
