/**
 * How wrong sign-ins slow a guesser down without locking a line's people out. Failures are counted
 * per username and client address, and per address over every username; a count is forgotten a day
 * after its last failure, and the pair's count on a right secret. Pure: the service stores the counts.
 */

/** The username under which an address's failures over every username are counted. */
export const EVERY_USER = '*';

/** The key a typed username is counted under: never the address-wide key, whatever was typed. */
export function throttleKey(username: string): string {
  const name = username.trim().toLowerCase();
  return name === EVERY_USER ? `${name} (as typed)` : name;
}

/** Failures of one username from one address before each further try must wait. */
export const FREE_FAILURES = 3;
/** The first wait, doubled with each further failure. */
export const FIRST_WAIT_MS = 5_000;
/** Failures of one username from one address that lock that pair. */
export const PAIR_LOCK_FAILURES = 10;
/** Failures from one address, over every username, that lock the address. */
export const ADDRESS_LOCK_FAILURES = 30;
/** How long a lock lasts; each failure after it locks again. */
export const LOCK_MS = 15 * 60_000;
/** A count with no failure for this long starts again from zero. */
export const FORGET_AFTER_MS = 24 * 3_600_000;

export interface FailureCount {
  failures: number;
  lastFailureAt: number;
  lockedUntil: number | null;
}

export type Gate = { open: true } | { open: false; kind: 'locked' | 'wait'; until: number };

/** The count as it stands at `now`: a stale one is forgotten. */
export function current(count: FailureCount | null, now: number): FailureCount | null {
  if (!count || now - count.lastFailureAt > FORGET_AFTER_MS) return null;
  return count;
}

/** Whether a try may go ahead now, given the pair's count and the address's count. */
export function gate(pair: FailureCount | null, address: FailureCount | null, now: number): Gate {
  for (const count of [address, pair]) {
    if (count?.lockedUntil != null && count.lockedUntil > now) return { open: false, kind: 'locked', until: count.lockedUntil };
  }
  if (pair && pair.failures >= FREE_FAILURES) {
    const until = pair.lastFailureAt + waitAfter(pair.failures);
    if (until > now) return { open: false, kind: 'wait', until };
  }
  return { open: true };
}

/** The wait before the next try after `failures` failures: none, then 5 s doubling, up to the lock. */
export function waitAfter(failures: number): number {
  if (failures < FREE_FAILURES) return 0;
  return Math.min(FIRST_WAIT_MS * 2 ** (failures - FREE_FAILURES), LOCK_MS);
}

/** The count after one more failure at `now`, locked when it reaches `lockAt`. */
export function afterFailure(count: FailureCount | null, now: number, lockAt: number): FailureCount & { newlyLocked: boolean } {
  const failures = (count?.failures ?? 0) + 1;
  const locks = failures >= lockAt;
  return { failures, lastFailureAt: now, lockedUntil: locks ? now + LOCK_MS : (count?.lockedUntil ?? null), newlyLocked: locks };
}

/**
 * Guesses one address gets at one username in the first `hours` hours, trying as fast as it is let:
 * the free tries, the doubling waits, then one guess per lock.
 */
export function guessesWithin(hours: number): number {
  const horizon = hours * 3_600_000;
  let t = 0;
  let guesses = 0;
  let count: FailureCount | null = null;
  while (t <= horizon) {
    guesses += 1;
    count = afterFailure(count, t, PAIR_LOCK_FAILURES);
    const next = Math.max(count.lockedUntil ?? 0, t + waitAfter(count.failures));
    t = Math.max(next, t + 1);
  }
  return guesses;
}
