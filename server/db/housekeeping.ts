import type { AuthRepository } from '../auth/repository.js';
import type { Clock } from '../clock.js';
import type { LiveRepository } from '../live/repository.js';

export interface HousekeepingOptions {
  clock: Clock;
  live: Pick<LiveRepository, 'prune'>;
  auth: Pick<AuthRepository, 'pruneSessions'>;
  /** Live messages older than this are past any resume: a client that far behind reloads. */
  liveKeepMs: number;
  sessionIdleMs: number;
  sessionMaxMs: number;
  /** Rows per delete: each delete is its own short transaction, so checks wait at most for one. */
  batch?: number;
}

const yieldToChecks = () => new Promise<void>((resolve) => setImmediate(resolve));

/**
 * Prunes what only grows and is no longer needed: live messages past the resume window and sessions
 * that can no longer be used. The audit trail and the checks are never pruned. Deletes go in small
 * batches with a turn of the event loop between them, so the write lock is never held for long.
 */
export async function pruneOnce(options: HousekeepingOptions): Promise<{ liveMessages: number; sessions: number }> {
  const batch = options.batch ?? 500;
  const now = options.clock.now();
  let liveMessages = 0;
  for (;;) {
    const n = options.live.prune(now - options.liveKeepMs, batch);
    liveMessages += n;
    if (n < batch) break;
    await yieldToChecks();
  }
  let sessions = 0;
  for (;;) {
    const n = options.auth.pruneSessions(now - options.sessionIdleMs, now - options.sessionMaxMs, batch);
    sessions += n;
    if (n < batch) break;
    await yieldToChecks();
  }
  return { liveMessages, sessions };
}
