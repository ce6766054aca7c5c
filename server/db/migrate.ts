import { createHash } from 'node:crypto';
import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { fromRoot } from '../paths.js';
import type { Db } from './database.js';

export const MIGRATIONS_DIR = fromRoot('migrations');

export class MigrationError extends Error {
  override name = 'MigrationError';
}

interface MigrationFile {
  version: number;
  name: string;
  sql: string;
  checksum: string;
}

function readMigrations(dir: string): MigrationFile[] {
  const files = readdirSync(dir)
    .filter((f) => /^\d{3}_[a-z0-9_-]+\.sql$/.test(f))
    .sort();
  return files.map((name) => {
    const sql = readFileSync(join(dir, name), 'utf8');
    return {
      version: Number(name.slice(0, 3)),
      name,
      sql,
      checksum: createHash('sha256').update(sql).digest('hex'),
    };
  });
}

/**
 * Applies migrations/NNN_*.sql in order, each in its own transaction, and records each with its
 * checksum. A landed migration whose file changed since is refused: migrations are forward-only.
 */
export function migrate(db: Db, dir: string = MIGRATIONS_DIR): { applied: string[] } {
  db.exec(`CREATE TABLE IF NOT EXISTS schema_migrations (
    version INTEGER PRIMARY KEY,
    name TEXT NOT NULL,
    checksum TEXT NOT NULL,
    applied_at TEXT NOT NULL
  )`);
  const landed = new Map(
    (db.prepare('SELECT version, name, checksum FROM schema_migrations').all() as {
      version: number;
      name: string;
      checksum: string;
    }[]).map((r) => [r.version, r]),
  );
  const files = readMigrations(dir);
  const seen = new Set<number>();
  for (const file of files) {
    if (seen.has(file.version)) throw new MigrationError(`two migrations share number ${file.version}`);
    seen.add(file.version);
    const row = landed.get(file.version);
    if (row && row.checksum !== file.checksum) {
      throw new MigrationError(
        `migration ${file.name} was edited after it was applied (checksum differs); add a new migration instead`,
      );
    }
  }
  const applied: string[] = [];
  const record = db.prepare(
    'INSERT INTO schema_migrations (version, name, checksum, applied_at) VALUES (?, ?, ?, ?)',
  );
  for (const file of files) {
    if (landed.has(file.version)) continue;
    try {
      db.transaction(() => {
        db.exec(file.sql);
        record.run(file.version, file.name, file.checksum, new Date().toISOString());
      }).immediate();
    } catch (err) {
      throw new MigrationError(`migration ${file.name} failed, so the database was left as it was before it: ${err instanceof Error ? err.message : String(err)}`);
    }
    applied.push(file.name);
  }
  return { applied };
}
