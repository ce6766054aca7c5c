import { appendFileSync, cpSync, mkdtempSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
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

  it('when a database with the calendar’s stops of migration 013 is upgraded, then those stops read "off-shift" and a person’s stay as they were', () => {
    const dir = mkdtempSync(join(tmpdir(), 'heft-mig-'));
    const upTo014 = join(dir, 'migrations');
    cpSync(MIGRATIONS_DIR, upTo014, { recursive: true });
    for (const f of readdirSync(upTo014).filter((name) => name >= '015')) rmSync(join(upTo014, f));
    const db = openDatabase(join(dir, 'd.db'));
    migrate(db, upTo014);
    db.prepare("INSERT INTO lines (code, name, created_at, updated_at) VALUES ('L1', 'Line 1', 0, 0)").run();
    const stop = db.prepare('INSERT INTO line_stops (line_id, reason, note, stopped_at, stopped_by, started_at, started_by) VALUES (1, ?, ?, ?, ?, ?, ?)');
    stop.run('other', 'between shifts (plant calendar)', 0, 'plant calendar', 10, 'plant calendar');
    stop.run('other', 'forklift in the way', 20, 'pat.quillan', 30, 'pat.quillan');
    stop.run('cleaning', null, 40, 'plant calendar', null, null);
    expect(migrate(db).applied).toEqual(readdirSync(MIGRATIONS_DIR).filter((name) => name >= '015' && name.endsWith('.sql')).sort());
    expect(db.prepare('SELECT reason, stopped_by AS by FROM line_stops ORDER BY id').all()).toEqual([
      { reason: 'off-shift', by: 'plant calendar' },
      { reason: 'other', by: 'pat.quillan' },
      { reason: 'cleaning', by: 'plant calendar' },
    ]);
    // the rebuilt table keeps its rule of one open stop per line
    expect(() => stop.run('break', null, 50, 'x', null, null)).toThrow(/UNIQUE/);
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
