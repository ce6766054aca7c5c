import { cpSync, mkdtempSync, readdirSync, writeFileSync, appendFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { openDatabase } from '../../server/db/database.js';
import { migrate, MIGRATIONS_DIR } from '../../server/db/migrate.js';
import { removeDir } from '../helpers.js';

describe('migrations', () => {
  it('when the database is new, then every migration applies in order and is recorded with a checksum', () => {
    const dir = mkdtempSync(join(tmpdir(), 'heft-mig-'));
    const db = openDatabase(join(dir, 'a.db'));
    const { applied } = migrate(db);
    const files = readdirSync(MIGRATIONS_DIR).filter((f) => f.endsWith('.sql')).sort();
    expect(applied).toEqual(files);
    const rows = db.prepare('SELECT name, checksum FROM schema_migrations ORDER BY version').all() as { name: string; checksum: string }[];
    expect(rows.map((r) => r.name)).toEqual(files);
    expect(rows.every((r) => /^[0-9a-f]{64}$/.test(r.checksum))).toBe(true);
    expect(migrate(db).applied).toEqual([]);
    expect(db.pragma('journal_mode', { simple: true })).toBe('wal');
    expect(db.pragma('synchronous', { simple: true })).toBe(2); // FULL
    expect(db.pragma('foreign_keys', { simple: true })).toBe(1);
    db.close();
    removeDir(dir);
  });

  it('when a landed migration was edited, then migrating refuses with a clear message', () => {
    const dir = mkdtempSync(join(tmpdir(), 'heft-mig-'));
    const copy = join(dir, 'migrations');
    cpSync(MIGRATIONS_DIR, copy, { recursive: true });
    const db = openDatabase(join(dir, 'b.db'));
    migrate(db, copy);
    appendFileSync(join(copy, '001_core.sql'), '\n-- an innocent-looking edit\n');
    expect(() => migrate(db, copy)).toThrow(/001_core\.sql was edited after it was applied/);
    db.close();
    removeDir(dir);
  });

  it('when a new migration fails halfway, then none of it is applied', () => {
    const dir = mkdtempSync(join(tmpdir(), 'heft-mig-'));
    const copy = join(dir, 'migrations');
    cpSync(MIGRATIONS_DIR, copy, { recursive: true });
    writeFileSync(join(copy, '900_broken.sql'), 'CREATE TABLE half_done (x INTEGER);\nTHIS IS NOT SQL;\n');
    const db = openDatabase(join(dir, 'c.db'));
    expect(() => migrate(db, copy)).toThrow(/migration 900_broken\.sql failed, so the database was left as it was before it: .*syntax error/);
    expect(db.prepare("SELECT name FROM sqlite_master WHERE name = 'half_done'").get()).toBeUndefined();
    expect(db.prepare('SELECT COUNT(*) AS n FROM schema_migrations WHERE version = 900').get()).toEqual({ n: 0 });
    db.close();
    removeDir(dir);
  });

  it('when someone tries to edit or delete the audit trail, then the database refuses', () => {
    const dir = mkdtempSync(join(tmpdir(), 'heft-mig-'));
    const db = openDatabase(join(dir, 'd.db'));
    migrate(db);
    db.prepare("INSERT INTO audit (at, actor, action, entity) VALUES (1, 'a', 'x', 'line')").run();
    expect(() => db.prepare("UPDATE audit SET actor = 'b'").run()).toThrow(/append-only/);
    expect(() => db.prepare('DELETE FROM audit').run()).toThrow(/append-only/);
    db.close();
    removeDir(dir);
  });
});
