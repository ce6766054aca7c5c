import type { Db } from '../db/database.js';
import type { Role } from './secrets.js';

export interface User {
  id: number;
  username: string;
  displayName: string;
  role: Role;
  disabled: boolean;
  failedAttempts: number;
  lockedUntil: number | null;
  lastSignInAt: number | null;
}

export interface UserSecret {
  hash: string;
  salt: string;
}

export interface Session {
  idHash: string;
  userId: number;
  createdAt: number;
  lastSeenAt: number;
  endedAt: number | null;
}

export type TokenKind = 'checks' | 'board';

export interface MachineToken {
  id: number;
  name: string;
  kind: TokenKind;
  lineIds: number[];
  createdBy: string;
  createdAt: number;
  revokedAt: number | null;
  lastUsedAt: number | null;
}

interface UserRow {
  id: number;
  username: string;
  display_name: string;
  role: Role;
  secret_hash: string;
  secret_salt: string;
  disabled: number;
  failed_attempts: number;
  locked_until: number | null;
  last_sign_in_at: number | null;
}

interface TokenRow {
  id: number;
  name: string;
  kind: TokenKind;
  line_ids: string;
  created_by: string;
  created_at: number;
  revoked_at: number | null;
  last_used_at: number | null;
}

const toUser = (r: UserRow): User => ({
  id: r.id,
  username: r.username,
  displayName: r.display_name,
  role: r.role,
  disabled: r.disabled === 1,
  failedAttempts: r.failed_attempts,
  lockedUntil: r.locked_until,
  lastSignInAt: r.last_sign_in_at,
});

const toToken = (r: TokenRow): MachineToken => ({
  id: r.id,
  name: r.name,
  kind: r.kind,
  lineIds: JSON.parse(r.line_ids) as number[],
  createdBy: r.created_by,
  createdAt: r.created_at,
  revokedAt: r.revoked_at,
  lastUsedAt: r.last_used_at,
});

export function createAuthRepository(db: Db) {
  const userById = db.prepare('SELECT * FROM users WHERE id = ?');
  const userByName = db.prepare('SELECT * FROM users WHERE username = ?');
  const users = db.prepare('SELECT * FROM users ORDER BY username');
  const insertUser = db.prepare(
    `INSERT INTO users (username, display_name, role, secret_hash, secret_salt, created_at, updated_at)
     VALUES (@username, @displayName, @role, @hash, @salt, @at, @at)`,
  );
  const updateUser = db.prepare(
    'UPDATE users SET display_name = @displayName, role = @role, disabled = @disabled, updated_at = @at WHERE id = @id',
  );
  const setSecret = db.prepare('UPDATE users SET secret_hash = @hash, secret_salt = @salt, failed_attempts = 0, locked_until = NULL, updated_at = @at WHERE id = @id');
  const insertSession = db.prepare(
    'INSERT INTO sessions (id_hash, user_id, created_at, last_seen_at) VALUES (@idHash, @userId, @at, @at)',
  );
  const markSignIn = db.prepare('UPDATE users SET last_sign_in_at = @at WHERE id = @userId');
  const sessionByHash = db.prepare('SELECT * FROM sessions WHERE id_hash = ?');
  const touchSession = db.prepare('UPDATE sessions SET last_seen_at = @at WHERE id_hash = @idHash');
  const endSession = db.prepare('UPDATE sessions SET ended_at = @at WHERE id_hash = @idHash AND ended_at IS NULL');
  const endUserSessions = db.prepare('UPDATE sessions SET ended_at = @at WHERE user_id = @userId AND ended_at IS NULL');
  const pruneSessions = db.prepare(
    `DELETE FROM sessions WHERE rowid IN (SELECT rowid FROM sessions
       WHERE ended_at IS NOT NULL OR last_seen_at < @idleBefore OR created_at < @startedBefore LIMIT @limit)`,
  );
  const insertToken = db.prepare(
    `INSERT INTO tokens (name, kind, token_hash, line_ids, created_by, created_at)
     VALUES (@name, @kind, @hash, @lineIds, @createdBy, @at)`,
  );
  const tokenByHash = db.prepare('SELECT * FROM tokens WHERE token_hash = ? AND revoked_at IS NULL');
  const tokenById = db.prepare('SELECT * FROM tokens WHERE id = ?');
  const tokens = db.prepare('SELECT * FROM tokens ORDER BY id');
  const touchToken = db.prepare('UPDATE tokens SET last_used_at = @at WHERE id = @id');
  const revokeToken = db.prepare('UPDATE tokens SET revoked_at = @at WHERE id = @id AND revoked_at IS NULL');

  return {
    /** Deletes up to `limit` sessions that can no longer be used (ended, idle too long, or too old); returns how many. */
    pruneSessions(idleBefore: number, startedBefore: number, limit: number): number {
      return pruneSessions.run({ idleBefore, startedBefore, limit }).changes;
    },
    user(id: number): User | null {
      const row = userById.get(id) as UserRow | undefined;
      return row ? toUser(row) : null;
    },
    userWithSecret(username: string): { user: User; secret: UserSecret } | null {
      const row = userByName.get(username) as UserRow | undefined;
      return row ? { user: toUser(row), secret: { hash: row.secret_hash, salt: row.secret_salt } } : null;
    },
    userByName(username: string): User | null {
      const row = userByName.get(username) as UserRow | undefined;
      return row ? toUser(row) : null;
    },
    users(): User[] {
      return (users.all() as UserRow[]).map(toUser);
    },
    addUser(u: { username: string; displayName: string; role: Role } & UserSecret, at: number): User {
      const id = Number(insertUser.run({ ...u, at }).lastInsertRowid);
      return this.user(id) as User;
    },
    updateUser(u: User, at: number): User {
      updateUser.run({ id: u.id, displayName: u.displayName, role: u.role, disabled: u.disabled ? 1 : 0, at });
      return this.user(u.id) as User;
    },
    setSecret(id: number, secret: UserSecret, at: number): void {
      setSecret.run({ id, ...secret, at });
    },
    startSession(idHash: string, userId: number, at: number): void {
      insertSession.run({ idHash, userId, at });
      markSignIn.run({ userId, at });
    },
    session(idHash: string): Session | null {
      const r = sessionByHash.get(idHash) as
        | { id_hash: string; user_id: number; created_at: number; last_seen_at: number; ended_at: number | null }
        | undefined;
      return r ? { idHash: r.id_hash, userId: r.user_id, createdAt: r.created_at, lastSeenAt: r.last_seen_at, endedAt: r.ended_at } : null;
    },
    touchSession(idHash: string, at: number): void {
      touchSession.run({ idHash, at });
    },
    endSession(idHash: string, at: number): void {
      endSession.run({ idHash, at });
    },
    endSessionsOf(userId: number, at: number): void {
      endUserSessions.run({ userId, at });
    },
    addToken(t: { name: string; kind: TokenKind; hash: string; lineIds: number[]; createdBy: string }, at: number): MachineToken {
      const id = Number(insertToken.run({ ...t, lineIds: JSON.stringify(t.lineIds), at }).lastInsertRowid);
      return this.token(id) as MachineToken;
    },
    token(id: number): MachineToken | null {
      const row = tokenById.get(id) as TokenRow | undefined;
      return row ? toToken(row) : null;
    },
    activeTokenByHash(hash: string): MachineToken | null {
      const row = tokenByHash.get(hash) as TokenRow | undefined;
      return row ? toToken(row) : null;
    },
    tokens(): MachineToken[] {
      return (tokens.all() as TokenRow[]).map(toToken);
    },
    touchToken(id: number, at: number): void {
      touchToken.run({ id, at });
    },
    revokeToken(id: number, at: number): boolean {
      return revokeToken.run({ id, at }).changes === 1;
    },
  };
}

export type AuthRepository = ReturnType<typeof createAuthRepository>;
