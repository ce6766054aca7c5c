import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { expect, test } from 'vitest';
import { createAuditRepository } from '../../server/audit/repository.js';
import { createAuthRepository } from '../../server/auth/repository.js';
import { createAuthService, TOKEN_RECHECK_MS } from '../../server/auth/service.js';
import { systemClock } from '../../server/clock.js';
import { openDatabase } from '../../server/db/database.js';
import { migrate } from '../../server/db/migrate.js';
import { removeDir } from '../helpers.js';

/** An auth service on a database file of its own, with the token memory's clock in the test's hand. */
function authOnFile() {
  const dir = mkdtempSync(join(tmpdir(), 'heft-token-cache-'));
  const file = join(dir, 'heft.db');
  const db = openDatabase(file);
  migrate(db);
  let now = 0;
  const auth = createAuthService({ db, clock: systemClock, repo: createAuthRepository(db), audit: createAuditRepository(db), sessionIdleMs: 1e9, sessionMaxMs: 1e9, cacheTime: () => now });
  return {
    file,
    auth,
    advance: (ms: number) => (now += ms),
    close: () => {
      db.close();
      removeDir(dir);
    },
  };
}

test('when another process revokes a token (as the CLI does), then the server refuses it once the token is read again, within TOKEN_RECHECK_MS', () => {
  const s = authOnFile();
  try {
    const { token, record } = s.auth.createToken({ name: 'scale 1', kind: 'checks', lineIds: [1] }, 'test');
    expect(s.auth.tokenActor(token)).toMatchObject({ kind: 'token', tokenId: record.id });
    // a second connection, as `heft token revoke` opens from its own process
    const other = new Database(s.file);
    other.prepare('UPDATE tokens SET revoked_at = ? WHERE id = ?').run(Date.now(), record.id);
    other.close();
    s.advance(TOKEN_RECHECK_MS - 1);
    expect(s.auth.tokenActor(token)).toMatchObject({ kind: 'token', tokenId: record.id }); // believed a little longer
    s.advance(1);
    expect(s.auth.tokenActor(token)).toBeNull();
    // and stays refused: a refusal is not remembered as a token
    s.advance(TOKEN_RECHECK_MS * 5);
    expect(s.auth.tokenActor(token)).toBeNull();
  } finally {
    s.close();
  }
});

test('when this server revokes a token, then it is refused at once, and a token never issued is refused', () => {
  const s = authOnFile();
  try {
    const { token, record } = s.auth.createToken({ name: 'wall', kind: 'board', lineIds: [] }, 'test');
    expect(s.auth.tokenActor(token)).toMatchObject({ kind: 'token', tokenId: record.id });
    s.auth.revokeToken(record.id, 'admin');
    expect(s.auth.tokenActor(token)).toBeNull();
    expect(s.auth.tokenActor(`${token}x`)).toBeNull();
  } finally {
    s.close();
  }
});
