import type { Db } from '../db/database.js';
import type { FailureCount } from './throttle.js';

export interface FailureRow extends FailureCount {
  username: string;
  address: string;
}

interface Row {
  username: string;
  address: string;
  failures: number;
  last_failure_at: number;
  locked_until: number | null;
}

const fromRow = (r: Row): FailureRow => ({ username: r.username, address: r.address, failures: r.failures, lastFailureAt: r.last_failure_at, lockedUntil: r.locked_until });

/** The sign-in failure counts, per username and address. */
export function createThrottleRepository(db: Db) {
  const get = db.prepare('SELECT * FROM sign_in_failures WHERE username = ? AND address = ?');
  const put = db.prepare(
    `INSERT INTO sign_in_failures (username, address, failures, last_failure_at, locked_until) VALUES (@username, @address, @failures, @lastFailureAt, @lockedUntil)
     ON CONFLICT (username, address) DO UPDATE SET failures = excluded.failures, last_failure_at = excluded.last_failure_at, locked_until = excluded.locked_until`,
  );
  const remove = db.prepare('DELETE FROM sign_in_failures WHERE username = ? AND address = ?');
  const matching = db.prepare('SELECT * FROM sign_in_failures WHERE (@username IS NULL OR username = @username) AND (@address IS NULL OR address = @address) ORDER BY username, address');
  const removeMatching = db.prepare('DELETE FROM sign_in_failures WHERE (@username IS NULL OR username = @username) AND (@address IS NULL OR address = @address)');
  const since = db.prepare('SELECT * FROM sign_in_failures WHERE last_failure_at >= ? OR locked_until > ? ORDER BY last_failure_at DESC');

  return {
    get(username: string, address: string): FailureRow | null {
      const row = get.get(username, address) as Row | undefined;
      return row ? fromRow(row) : null;
    },
    put(row: FailureRow): void {
      put.run(row);
    },
    remove(username: string, address: string): void {
      remove.run(username, address);
    },
    matching(username: string | null, address: string | null): FailureRow[] {
      return (matching.all({ username, address }) as Row[]).map(fromRow);
    },
    removeMatching(username: string | null, address: string | null): number {
      return removeMatching.run({ username, address }).changes;
    },
    /** Counts with a failure since `from`, or a lock still in force at `now`. */
    recent(from: number, now: number): FailureRow[] {
      return (since.all(from, now) as Row[]).map(fromRow);
    },
  };
}

export type ThrottleRepository = ReturnType<typeof createThrottleRepository>;
