import type { AuditRepository } from '../audit/repository.js';
import type { Clock } from '../clock.js';
import type { Db } from '../db/database.js';
import { badField, conflict, DomainError, notFound } from '../errors.js';
import type { AuthRepository, MachineToken, TokenKind, User } from './repository.js';
import { ADDRESS_LOCK_FAILURES, afterFailure, current, EVERY_USER, FORGET_AFTER_MS, gate, PAIR_LOCK_FAILURES, throttleKey } from './throttle.js';
import { createThrottleRepository, type FailureRow } from './throttle-repository.js';
import { hashSecret, randomToken, secretProblem, tokenHash, verifySecret, type Role } from './secrets.js';

export type Actor =
  | { kind: 'user'; userId: number; username: string; role: Role; sessionHash: string | null }
  | { kind: 'token'; tokenId: number; name: string; tokenKind: TokenKind; lineIds: number[] };

/** The name an actor goes by in the audit trail and in "entered by". */
export function actorName(actor: Actor): string {
  return actor.kind === 'user' ? actor.username : `token:${actor.name}`;
}

/** 423 for a lock, 429 for a wait; both say until when, and Retry-After carries the seconds. */
function refusal(kind: 'locked' | 'wait', until: number, now: number): DomainError {
  const seconds = Math.max(1, Math.ceil((until - now) / 1000));
  const message =
    kind === 'locked'
      ? `too many wrong sign-ins from this device: it is locked until ${new Date(until).toISOString()}; another device still works, and a supervisor or admin can clear the lock`
      : `too many wrong sign-ins from this device: wait ${seconds} s before the next try`;
  return new DomainError(kind === 'locked' ? 423 : 429, kind === 'locked' ? 'locked' : 'slow-down', message, [], { retryAfterSeconds: seconds });
}

const withArticle = (role: Role) => (role === 'admin' || role === 'operator' ? `an ${role}` : `a ${role}`);

export interface AuthServiceOptions {
  db: Db;
  clock: Clock;
  repo: AuthRepository;
  audit: AuditRepository;
  sessionIdleMs: number;
  sessionMaxMs: number;
  /** Milliseconds for how long a token read is believed (tests move it by hand); this process's own clock by default. */
  cacheTime?: () => number;
}

// A fixed salt and hash to spend the same scrypt time on an unknown username as on a known one.
const DUMMY = { hash: 'AAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAA=', salt: 'AAAAAAAAAAAAAAAAAAAAAA==' };

/**
 * How long a bearer token found active is believed without reading it again. Hashing and reading it
 * on every request was about 5 % of the server's time under a stream of checks; a revocation through
 * this server takes effect at once, one through the CLI (another process) within this time.
 */
export const TOKEN_RECHECK_MS = 1000;
/** Tokens remembered at most (a plant has a few dozen); past it the memory starts again. */
const TOKENS_REMEMBERED = 1000;

export function createAuthService(o: AuthServiceOptions) {
  const { db, clock, repo, audit } = o;
  const throttle = createThrottleRepository(db);
  // by the bearer as sent; timed by this process's own clock, not the injected one: a cache, not a fact of the plant
  const knownTokens = new Map<string, { token: MachineToken; readAt: number }>();
  const cacheTime = o.cacheTime ?? (() => performance.now());
  const activeToken = (bearer: string): MachineToken | null => {
    const known = knownTokens.get(bearer);
    if (known && cacheTime() - known.readAt < TOKEN_RECHECK_MS) return known.token;
    const token = repo.activeTokenByHash(tokenHash(bearer));
    if (!token) {
      knownTokens.delete(bearer);
      return null;
    }
    if (knownTokens.size >= TOKENS_REMEMBERED) knownTokens.clear();
    knownTokens.set(bearer, { token, readAt: cacheTime() });
    return token;
  };

  /** One more failure for the pair and for the address; a new lock goes into the audit trail. */
  function countFailure(name: string, address: string, user: User | null, now: number): void {
    const counts = [
      { username: name, lockAt: PAIR_LOCK_FAILURES },
      { username: EVERY_USER, lockAt: ADDRESS_LOCK_FAILURES },
    ];
    for (const { username, lockAt } of counts) {
      const next = afterFailure(current(throttle.get(username, address), now), now, lockAt);
      throttle.put({ username, address, failures: next.failures, lastFailureAt: next.lastFailureAt, lockedUntil: next.lockedUntil });
      if (next.newlyLocked) {
        audit.record({
          at: now,
          actor: 'heft',
          action: username === EVERY_USER ? 'sign-in.lock-address' : 'sign-in.lock',
          entity: 'sign-in',
          entityId: username === EVERY_USER ? address : name,
          after: { username: username === EVERY_USER ? null : name, userId: username === EVERY_USER ? null : (user?.id ?? null), address, failures: next.failures, lockedUntil: new Date(next.lockedUntil as number).toISOString() },
        });
      }
    }
  }

  return {
    /**
     * Checks a username and secret from a client address. Wrong secrets slow that address down for
     * that username and then lock the pair; many wrong secrets from one address lock the address.
     * The same user from another address is never held up (throttle.ts has the figures).
     */
    async signIn(username: string, secret: string, address: string): Promise<{ sessionId: string; user: User }> {
      const name = throttleKey(username);
      const before = clock.now();
      const held = gate(current(throttle.get(name, address), before), current(throttle.get(EVERY_USER, address), before), before);
      if (!held.open) throw refusal(held.kind, held.until, before);
      const found = repo.userWithSecret(username);
      const ok = await verifySecret(secret, found?.secret.hash ?? DUMMY.hash, found?.secret.salt ?? DUMMY.salt);
      const now = clock.now();
      if (!ok || !found || found.user.disabled) {
        db.transaction(() => countFailure(name, address, found?.user ?? null, now)).immediate();
        throw new DomainError(401, 'unauthorized', 'unknown user or wrong PIN or password');
      }
      const { user } = found;
      const sessionId = randomToken();
      db.transaction(() => {
        throttle.remove(name, address);
        repo.startSession(tokenHash(sessionId), user.id, now);
      }).immediate();
      return { sessionId, user };
    },

    /** Failure counts with a failure in the last day or a lock in force: what a supervisor can clear. */
    signInLocks(): (FailureRow & { locked: boolean })[] {
      const now = clock.now();
      return throttle.recent(now - FORGET_AFTER_MS, now).map((r) => ({ ...r, locked: r.lockedUntil !== null && r.lockedUntil > now }));
    },

    /** Clears the failure counts (and so the locks) of a username, an address, or a username at an address. */
    clearSignInLocks(target: { username?: string; address?: string }, by: string): number {
      const name = target.username === undefined ? null : throttleKey(target.username);
      const address = target.address ?? null;
      if (name === null && address === null) throw badField('username', 'name a username, an address, or both');
      const now = clock.now();
      return db.transaction(() => {
        const cleared = throttle.matching(name, address);
        // an address's count over every username goes with the address, not with one username
        if (name !== null && address === null) cleared.push(...throttle.matching(EVERY_USER, null).filter((r) => cleared.some((c) => c.address === r.address)));
        for (const row of cleared) throttle.remove(row.username, row.address);
        audit.record({
          at: now,
          actor: by,
          action: 'sign-in.clear',
          entity: 'sign-in',
          entityId: name ?? address,
          before: cleared.map((r) => ({ username: r.username, address: r.address, failures: r.failures, lockedUntil: r.lockedUntil === null ? null : new Date(r.lockedUntil).toISOString() })),
          after: null,
        });
        return cleared.length;
      }).immediate();
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
      const found = activeToken(token);
      const now = clock.now();
      // the set-up page's "last use", to the minute: a write per minute at most, not one per check
      if (found && now - (found.lastUsedAt ?? 0) > 60_000) {
        repo.touchToken(found.id, now);
        found.lastUsedAt = now;
      }
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
        // a new secret ends the guessing at the old one: its failure counts go
        const cleared = throttle.matching(user.username.toLowerCase(), null);
        if (cleared.length > 0) {
          throttle.removeMatching(user.username.toLowerCase(), null);
          audit.record({ at: now, actor: by, action: 'sign-in.clear', entity: 'sign-in', entityId: user.username.toLowerCase(), before: cleared.map((r) => ({ address: r.address, failures: r.failures })), after: { reason: 'new secret' } });
        }
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
        knownTokens.clear();
        audit.record({ at: now, actor: by, action: 'token.revoke', entity: 'token', entityId: id, before: { name: token.name } });
        return repo.token(id) as MachineToken;
      }).immediate();
    },

    users: () => repo.users(),
    tokens: () => repo.tokens(),
  };
}

export type AuthService = ReturnType<typeof createAuthService>;
