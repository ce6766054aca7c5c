import type {} from '@fastify/cookie';
import type { FastifyInstance, FastifyReply, FastifyRequest } from 'fastify';
import { ROLES, type Role } from './secrets.js';
import type { Actor, AuthService } from './service.js';
import { DomainError, forbidden, unauthorized } from '../errors.js';

/**
 * Who may call a route, declared on every route as `config: { roles: [...] }`:
 * 'anyone', any of the four roles, 'board-token' (a wall screen's read-only token) and
 * 'checks-token' (a scale's token, only for the lines it names).
 */
export type Access = 'anyone' | Role | 'board-token' | 'checks-token';

export const SIGNED_IN: Access[] = [...ROLES];
export const SUPERVISOR_UP: Access[] = ['supervisor', 'quality', 'admin'];
export const QUALITY_UP: Access[] = ['quality', 'admin'];
export const ADMIN: Access[] = ['admin'];
export const BOARD_READ: Access[] = [...ROLES, 'board-token'];

declare module 'fastify' {
  interface FastifyContextConfig {
    roles?: Access[];
    /** A route without a :lineId that answers a checks token only about its own lines (the handler filters). */
    tokenLinesInHandler?: boolean;
  }
  interface FastifyRequest {
    actor: Actor | null;
  }
  interface FastifyInstance {
    /** Every route Fastify registered, with its declared roles and answers: the access matrix and contract tests walk it. */
    routeTable: { method: string; url: string; roles: Access[]; response: Record<string, unknown> | null }[];
  }
}

export const SESSION_COOKIE = 'heft_session';
/** The API reference page and its files (served by @fastify/swagger-ui, whose routes declare no roles): public, like the pages. */
export const PUBLIC_DOCS = '/api/docs';
/** A wall screen's board token, kept in a cookie so the page's fetches and its WebSocket carry it. */
export const BOARD_COOKIE = 'heft_board';

const SAFE_METHODS = new Set(['GET', 'HEAD', 'OPTIONS']);

/** A state change riding on the session cookie must come from our own pages, not another site. */
function crossOrigin(request: FastifyRequest): boolean {
  const origin = request.headers.origin;
  if (typeof origin === 'string' && origin !== 'null') {
    try {
      const host = request.headers.host;
      return !host || new URL(origin).host !== new URL(`http://${host}`).host;
    } catch {
      return true;
    }
  }
  if (origin === 'null') return true;
  return request.headers['sec-fetch-site'] === 'cross-site';
}

/** Installs the one access hook. A route that declares no roles makes the app refuse to start. */
export function installAccess(app: FastifyInstance, auth: AuthService): void {
  app.decorateRequest('actor', null);
  const table: FastifyInstance['routeTable'] = [];
  app.decorate('routeTable', table);
  app.addHook('onRoute', (route) => {
    if (!route.config?.roles && (route.url === PUBLIC_DOCS || route.url.startsWith(`${PUBLIC_DOCS}/`))) route.config = { ...route.config, roles: ['anyone'] };
    const roles = route.config?.roles;
    if (!Array.isArray(roles) || roles.length === 0) {
      throw new Error(`route ${String(route.method)} ${route.url} declares no roles (config.roles)`);
    }
    for (const method of [route.method].flat()) table.push({ method: String(method), url: route.url, roles, response: (route.schema?.response as Record<string, unknown> | undefined) ?? null });
  });
  app.addHook('onRequest', async (request: FastifyRequest, _reply: FastifyReply) => {
    const roles = request.routeOptions.config?.roles;
    if (!roles) return; // not-found handler
    const header = request.headers.authorization;
    let viaCookie = false;
    if (typeof header === 'string' && header.startsWith('Bearer ')) {
      request.actor = auth.tokenActor(header.slice(7).trim());
      if (!request.actor && !roles.includes('anyone')) throw unauthorized('that bearer token is not valid or was revoked');
    } else {
      const sessionId = request.cookies?.[SESSION_COOKIE];
      if (sessionId) {
        request.actor = auth.sessionActor(sessionId);
        viaCookie = request.actor !== null;
      }
      const boardToken = request.cookies?.[BOARD_COOKIE];
      if (!request.actor && boardToken) {
        const actor = auth.tokenActor(boardToken);
        // only a board token may ride in this cookie
        request.actor = actor?.kind === 'token' && actor.tokenKind === 'board' ? actor : null;
        viaCookie = request.actor !== null;
      }
    }
    if (viaCookie && !SAFE_METHODS.has(request.method) && crossOrigin(request)) {
      throw new DomainError(403, 'cross-origin', 'a change from another site was refused');
    }
    if (roles.includes('anyone')) return;
    const actor = request.actor;
    if (!actor) throw unauthorized();
    if (actor.kind === 'user') {
      if (!roles.includes(actor.role)) throw forbidden(`a ${actor.role} may not do this`);
      return;
    }
    if (actor.tokenKind === 'board' && roles.includes('board-token')) return;
    if (actor.tokenKind === 'checks' && roles.includes('checks-token')) {
      if (request.routeOptions.config?.tokenLinesInHandler) return;
      const lineId = Number((request.params as Record<string, string> | undefined)?.lineId);
      if (actor.lineIds.includes(lineId)) return;
      throw forbidden(`this token may post checks only for lines ${actor.lineIds.join(', ') || '(none)'}`);
    }
    throw forbidden('this token may not do this');
  });
}

export function requireActor(request: FastifyRequest): Actor {
  if (!request.actor) throw unauthorized();
  return request.actor;
}
