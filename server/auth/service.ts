import type { AuditRepository } from '../audit/repository.js';
import type { Clock } from '../clock.js';
import type { Db } from '../db/database.js';
import { badField, conflict, DomainError, notFound } from '../errors.js';
import type { AuthRepository, MachineToken, TokenKind, User } from './repository.js';
import { hashSecret, randomToken, secretProblem, tokenHash, verifySecret, type Role } from './secrets.js';

export type Actor =
  | { kind: 'user'; userId: number; username: string; role: Role; sessionHash: string | null }
  | { kind: 'token'; tokenId: number; name: string; tokenKind: TokenKind; lineIds: number[] };

/** The name an actor goes by in the audit trail and in "entered by". */
export function actorName(actor: Actor): string {
  return actor.kind === 'user' ? actor.username : `token:${actor.name}`;
}

const withArticle = (role: Role) => (role === 'admin' || role === 'operator' ? `an ${role}` : `a ${role}`);

export const LOCKOUT_AFTER_FAILURES = 5;
export const LOCKOUT_MINUTES = 15;

export interface AuthServiceOptions {
  db: Db;
  clock: Clock;
  repo: AuthRepository;
  audit: AuditRepository;
  sessionIdleMs: number;
  sessionMaxMs: number;
}

// A fixed salt and hash to spend the same scrypt time on an unknown username as on a known one.
const DUMMY = { hash: 'AAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAA=', salt: 'AAAAAAAAAAAAAAAAAAAAAA==' };

export function createAuthService(o: AuthServiceOptions) {
  const { db, clock, repo, audit } = o;

  return {
    /** Checks a username and secret; counts failures and locks the user out after too many. */
    async signIn(username: string, secret: string): Promise<{ sessionId: string; user: User }> {
      const found = repo.userWithSecret(username);
      const ok = await verifySecret(secret, found?.secret.hash ?? DUMMY.hash, found?.secret.salt ?? DUMMY.salt);
      const now = clock.now();
      if (!found || found.user.disabled) throw new DomainError(401, 'unauthorized', 'unknown user or wrong PIN or password');
      const { user } = found;
      if (user.lockedUntil !== null && user.lockedUntil > now) {
        throw new DomainError(423, 'locked', `too many failed sign-ins: ${user.username} is locked until ${new Date(user.lockedUntil).toISOString()}; an admin can unlock by setting a new secret`);
      }
      if (!ok) {
        const failures = (user.lockedUntil !== null ? 0 : user.failedAttempts) + 1;
        db.transaction(() => {
          if (failures >= LOCKOUT_AFTER_FAILURES) {
            const until = now + LOCKOUT_MINUTES * 60_000;
            repo.setAttempts(user.id, 0, until);
            audit.record({ at: now, actor: 'heft', action: 'user.locked', entity: 'user', entityId: user.id, after: { username: user.username, failures, lockedUntil: new Date(until).toISOString() } });
          } else {
            repo.setAttempts(user.id, failures, null);
          }
        }).immediate();
        throw new DomainError(401, 'unauthorized', 'unknown user or wrong PIN or password');
      }
      const sessionId = randomToken();
      db.transaction(() => {
        repo.setAttempts(user.id, 0, null);
        repo.startSession(tokenHash(sessionId), user.id, now);
      }).immediate();
      return { sessionId, user };
    },

    /** The person behind a session cookie, or null when it is unknown, ended, idle too long or too old. */
    sessionActor(sessionId: string): Actor | null {
      const idHash = tokenHash(sessionId);
      const session = repo.session(idHash);
      const now = clock.now();
      if (!session || session.endedAt !== null) return null;
      if (now - session.lastSeenAt > o.sessionIdleMs || now - session.createdAt > o.sessionMaxMs) {
        repo.endSession(idHash, now);
        return null;
      }
      const user = repo.user(session.userId);
      if (!user || user.disabled) return null;
      // a write per minute at most, not one per request
      if (now - session.lastSeenAt > 60_000) repo.touchSession(idHash, now);
      return { kind: 'user', userId: user.id, username: user.username, role: user.role, sessionHash: idHash };
    },

    tokenActor(token: string): Actor | null {
      const found = repo.activeTokenByHash(tokenHash(token));
      return found ? { kind: 'token', tokenId: found.id, name: found.name, tokenKind: found.kind, lineIds: found.lineIds } : null;
    },

    signOut(actor: Actor): void {
      if (actor.kind === 'user' && actor.sessionHash) repo.endSession(actor.sessionHash, clock.now());
    },

    async addUser(fields: { username: string; displayName: string; role: Role; secret: string }, by: string): Promise<User> {
      const problem = secretProblem(fields.role, fields.secret);
      if (problem) throw badField('secret', `${withArticle(fields.role)} needs ${problem}`);
      if (repo.userByName(fields.username)) throw conflict(`user ${fields.username} exists already`);
      const secret = await hashSecret(fields.secret);
      const now = clock.now();
      return db.transaction(() => {
        const user = repo.addUser({ username: fields.username, displayName: fields.displayName, role: fields.role, ...secret }, now);
        audit.record({ at: now, actor: by, action: 'user.add', entity: 'user', entityId: user.id, after: { username: user.username, displayName: user.displayName, role: user.role } });
        return user;
      }).immediate();
    },

    async setSecret(username: string, secret: string, by: string): Promise<User> {
      const user = repo.userByName(username);
      if (!user) throw notFound(`user ${username}`);
      const problem = secretProblem(user.role, secret);
      if (problem) throw badField('secret', `${withArticle(user.role)} needs ${problem}`);
      const hashed = await hashSecret(secret);
      const now = clock.now();
      db.transaction(() => {
        repo.setSecret(user.id, hashed, now);
        repo.endSessionsOf(user.id, now);
        audit.record({ at: now, actor: by, action: 'user.secret', entity: 'user', entityId: user.id, after: { username: user.username } });
      }).immediate();
      return repo.user(user.id) as User;
    },

    updateUser(id: number, change: { displayName?: string; role?: Role; disabled?: boolean }, by: string): User {
      const user = repo.user(id);
      if (!user) throw notFound(`user ${id}`);
      const now = clock.now();
      return db.transaction(() => {
        const next = repo.updateUser({ ...user, ...change }, now);
        if (next.disabled) repo.endSessionsOf(id, now);
        audit.record({ at: now, actor: by, action: 'user.update', entity: 'user', entityId: id, before: { displayName: user.displayName, role: user.role, disabled: user.disabled }, after: { displayName: next.displayName, role: next.role, disabled: next.disabled } });
        return next;
      }).immediate();
    },

    /** Makes a token and returns it once; only its hash is kept. */
    createToken(fields: { name: string; kind: TokenKind; lineIds: number[] }, by: string): { token: string; record: MachineToken } {
      const token = `heft_${randomToken()}`;
      const now = clock.now();
      const record = db.transaction(() => {
        const r = repo.addToken({ ...fields, hash: tokenHash(token), createdBy: by }, now);
        audit.record({ at: now, actor: by, action: 'token.create', entity: 'token', entityId: r.id, after: { name: r.name, kind: r.kind, lineIds: r.lineIds } });
        return r;
      }).immediate();
      return { token, record };
    },

    revokeToken(id: number, by: string): MachineToken {
      const now = clock.now();
      return db.transaction(() => {
        const token = repo.token(id);
        if (!token) throw notFound(`token ${id}`);
        if (!repo.revokeToken(id, now)) throw conflict(`token ${id} is already revoked`);
        audit.record({ at: now, actor: by, action: 'token.revoke', entity: 'token', entityId: id, before: { name: token.name } });
        return repo.token(id) as MachineToken;
      }).immediate();
    },

    users: () => repo.users(),
    tokens: () => repo.tokens(),
  };
}

export type AuthService = ReturnType<typeof createAuthService>;
