import { describe, expect, it } from 'vitest';
import { buildApp } from '../../server/app.js';
import { FALLBACK_AUTOCHECKPOINT_PAGES } from '../../server/db/checkpointer.js';
import { ManualClock } from '../../server/clock.js';
import { parseConfig } from '../../server/config.js';
import { openDatabase } from '../../server/db/database.js';
import { migrate } from '../../server/db/migrate.js';
import { countRows, makeTestApp, removeDir } from '../helpers.js';

describe('WAL checkpoints on their own thread', () => {
  it('when the server writes, then the worker copies the WAL into the database file, the writer checkpoints by itself only far later, and after a stop as before', async () => {
    // a directory of its own with a migrated database; the app under test is built on it here
    const scratch = await makeTestApp();
    const { dir, file } = scratch;
    await scratch.close();
    const db = openDatabase(file);
    migrate(db);
    const app = await buildApp({ db, clock: new ManualClock(Date.parse('2026-03-02T06:00:00Z')), config: parseConfig([], {}, { db: file }), checkpointThread: true });
    try {
      const checkpointer = app.checkpointer;
      expect(checkpointer).not.toBeNull();
      expect(db.pragma('wal_autocheckpoint', { simple: true })).toBe(FALLBACK_AUTOCHECKPOINT_PAGES);
      // 2,000 audit rows written by the writer (a few hundred WAL pages), then the next checkpoint
      const insert = db.prepare("INSERT INTO audit (at, actor, action, entity, entity_id, before, after) VALUES (?, 'test', 'test.fill', 'test', NULL, NULL, ?)");
      db.transaction(() => {
        for (let i = 0; i < 2000; i += 1) insert.run(i, JSON.stringify({ i, pad: 'x'.repeat(200) }));
      })();
      await checkpointer?.next();
      await checkpointer?.next();
      // the WAL held the pages of those rows, and the worker copied every frame of it (PASSIVE:
      // nothing was writing meanwhile); the writer never crossed its own threshold
      expect(checkpointer?.last?.log).toBeGreaterThan(50);
      expect(checkpointer?.last?.busy).toBe(0);
      expect(checkpointer?.last?.checkpointed).toBe(checkpointer?.last?.log);
      expect(countRows(db, 'audit')).toBeGreaterThanOrEqual(2000);
    } finally {
      await app.close();
      expect(db.pragma('wal_autocheckpoint', { simple: true })).toBe(1000);
      db.close();
      removeDir(dir);
    }
  });
});
