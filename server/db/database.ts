import Database from 'better-sqlite3';
import { mkdirSync } from 'node:fs';
import { dirname } from 'node:path';

export type Db = Database.Database;

export interface OpenOptions {
  busyTimeoutMs?: number;
}

/**
 * Opens the SQLite file with the pragmas Heft relies on: WAL for readers beside the writer,
 * synchronous=FULL so that an acknowledged check survives a power cut, foreign keys enforced.
 */
export function openDatabase(file: string, options: OpenOptions = {}): Db {
  if (file !== ':memory:') mkdirSync(dirname(file), { recursive: true });
  const db = new Database(file);
  db.pragma('journal_mode = WAL');
  db.pragma('synchronous = FULL');
  db.pragma('foreign_keys = ON');
  db.pragma(`busy_timeout = ${Math.max(0, Math.floor(options.busyTimeoutMs ?? 5000))}`);
  return db;
}

/**
 * A read-only connection of its own for a long read (a streamed export), so it never holds the
 * writer's connection; it waits out a writer's lock like the others.
 */
export function openReadOnly(file: string, options: OpenOptions = {}): Db {
  const db = new Database(file, { readonly: true, fileMustExist: true });
  db.pragma(`busy_timeout = ${Math.max(0, Math.floor(options.busyTimeoutMs ?? 5000))}`);
  return db;
}
