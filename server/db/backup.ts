import { copyFileSync, existsSync, readdirSync, readFileSync, renameSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { basename, dirname, join } from 'node:path';
import { openReadOnly, type Db } from './database.js';

/** What a finished backup (or a restored file) holds, as the CLI and GET /api/health report it. */
export interface BackupReport {
  file: string;
  at: number;
  bytes: number;
  /** How many checks it holds; null for a file found on disk rather than made in this run. */
  checks: number | null;
}

export class BackupError extends Error {}

/**
 * Checks a copy before anyone relies on it: SQLite's integrity_check must say ok, and the file must
 * be a Heft database (it has the checks table). Returns how many checks it holds.
 */
export function verifyCopy(file: string): number {
  if (!existsSync(file)) throw new BackupError(`${file} does not exist`);
  let copy: Db;
  try {
    copy = openReadOnly(file);
  } catch (err) {
    throw new BackupError(`${file} is not a SQLite database: ${err instanceof Error ? err.message : String(err)}`);
  }
  try {
    const verdict = (copy.pragma('integrity_check') as { integrity_check: string }[]).map((r) => r.integrity_check);
    if (verdict.length !== 1 || verdict[0] !== 'ok') throw new BackupError(`${file} fails SQLite's integrity check: ${verdict.slice(0, 3).join('; ')}`);
    const table = copy.prepare("SELECT 1 FROM sqlite_master WHERE type = 'table' AND name = 'checks'").get();
    if (!table) throw new BackupError(`${file} is not a Heft database (no checks table)`);
    return (copy.prepare('SELECT COUNT(*) AS n FROM checks').get() as { n: number }).n;
  } catch (err) {
    if (err instanceof BackupError) throw err;
    throw new BackupError(`${file} could not be read: ${err instanceof Error ? err.message : String(err)}`);
  } finally {
    copy.close();
  }
}

/**
 * A consistent copy of the live database through SQLite's online backup API, written beside the
 * target and moved into place only once it passes verifyCopy. `pagesPerStep`: the server copies in
 * small steps so checks keep flowing between them (its own writes go into the copy as it runs); a
 * separate process (the CLI) copies in one step, one read snapshot that the server's writes, from
 * another connection, cannot restart.
 */
export async function backupDatabase(db: Db, to: string, pagesPerStep: number | 'all', now: () => number = Date.now): Promise<BackupReport> {
  const partial = join(dirname(to), `.${basename(to)}.partial`);
  rmSync(partial, { force: true });
  try {
    await db.backup(partial, { progress: () => (pagesPerStep === 'all' ? 0x7fffffff : pagesPerStep) });
    const checks = verifyCopy(partial);
    renameSync(partial, to);
    return { file: to, at: now(), bytes: statSync(to).size, checks };
  } finally {
    rmSync(partial, { force: true });
  }
}

/** The file a running server keeps beside its database, holding its process id. */
export const pidFileOf = (dbFile: string) => `${dbFile}.pid`;

/** Whether a Heft server has this database open now (its pid file names a live process). */
export function databaseInUse(dbFile: string): number | null {
  const pidFile = pidFileOf(dbFile);
  if (!existsSync(pidFile)) return null;
  const pid = Number(readFileSync(pidFile, 'utf8').trim());
  if (!Number.isInteger(pid) || pid <= 0) return null;
  try {
    process.kill(pid, 0);
    return pid;
  } catch {
    return null; // left behind by a server that was killed: nobody has the file open
  }
}

export function writePidFile(dbFile: string): void {
  writeFileSync(pidFileOf(dbFile), `${process.pid}\n`);
}

export function removePidFile(dbFile: string): void {
  if (databaseInUse(dbFile) === process.pid) rmSync(pidFileOf(dbFile), { force: true });
}

/**
 * Puts a verified backup in the database's place. Refuses while a server has the database open and
 * refuses a file that fails the check; the old database's WAL and shared-memory files go with it.
 */
export function restoreDatabase(from: string, dbFile: string, now: () => number = Date.now): BackupReport {
  const pid = databaseInUse(dbFile);
  if (pid !== null) throw new BackupError(`a Heft server (process ${pid}) has ${dbFile} open: stop it before restoring`);
  const checks = verifyCopy(from);
  const incoming = join(dirname(dbFile), `.${basename(dbFile)}.restoring`);
  copyFileSync(from, incoming);
  for (const side of ['-wal', '-shm']) rmSync(`${dbFile}${side}`, { force: true });
  renameSync(incoming, dbFile);
  return { file: dbFile, at: now(), bytes: statSync(dbFile).size, checks };
}

const DAILY = /^heft-(\d{4}-\d{2}-\d{2})\.db$/;

/** The ISO week a calendar day (YYYY-MM-DD) falls in, as "YYYY-Www": the week's Thursday decides its year (ISO 8601). */
export function isoWeek(day: string): string {
  const date = new Date(`${day}T00:00:00Z`);
  const weekday = date.getUTCDay() || 7; // Monday 1 … Sunday 7
  date.setUTCDate(date.getUTCDate() + 4 - weekday);
  const yearStart = Date.UTC(date.getUTCFullYear(), 0, 1);
  const week = Math.ceil(((date.getTime() - yearStart) / 86_400_000 + 1) / 7);
  return `${date.getUTCFullYear()}-W${String(week).padStart(2, '0')}`;
}

/**
 * Which daily backups to keep: the newest `daily`, and the newest of each of the newest `weekly`
 * ISO weeks. The rest may go. Names are heft-YYYY-MM-DD.db.
 */
export function backupsToKeep(names: readonly string[], daily: number, weekly: number): Set<string> {
  const dated = names.flatMap((n) => {
    const m = DAILY.exec(n);
    return m ? [{ name: n, day: m[1] as string }] : [];
  });
  dated.sort((a, b) => (a.day < b.day ? 1 : -1));
  const keep = new Set(dated.slice(0, daily).map((d) => d.name));
  const weeks = new Set<string>();
  for (const d of dated) {
    const week = isoWeek(d.day);
    if (weeks.has(week)) continue;
    if (weeks.size >= weekly) break;
    weeks.add(week);
    keep.add(d.name);
  }
  return keep;
}

/** The daily backups in a folder, newest first. */
export function listBackups(dir: string): string[] {
  if (!existsSync(dir)) return [];
  return readdirSync(dir)
    .filter((n) => DAILY.test(n))
    .sort()
    .reverse();
}
