import type { WalSync } from '../db/wal-sync.js';
import { DomainError } from '../errors.js';
import type { Monitor } from './monitor.js';

/** What a request carries so that the answer does not wait for a second flush (see app.ts, onSend). */
export interface FlushMark {
  flushed: boolean;
}

interface Pending {
  job: () => unknown;
  mark: FlushMark | undefined;
  resolve: (value: unknown) => void;
  reject: (error: unknown) => void;
}

/**
 * Collects the checks that arrive in one event-loop turn and commits them together, answering each
 * request (and sending the batch's live messages) only once a flush of the WAL that began after the
 * commit has finished. The flush runs off the event loop, so the next batch is read and judged while
 * the disk works; batches committed meanwhile share the next flush. Alone, a check waits for the
 * next turn and one flush.
 */
export class GroupCommitter {
  private queue: Pending[] = [];
  private scheduled = false;

  constructor(
    private readonly monitor: Monitor,
    private readonly wal: WalSync,
    private readonly maxBatch = 256,
  ) {}

  /** Runs `job` in the next batch; resolves (or rejects) once its batch is on the disk, then sets `mark.flushed`. */
  submit<T>(job: () => T, mark?: FlushMark): Promise<T> {
    return new Promise<T>((resolve, reject) => {
      this.queue.push({ job, mark, resolve: resolve as (v: unknown) => void, reject });
      if (!this.scheduled) {
        this.scheduled = true;
        setImmediate(() => this.flush());
      }
    });
  }

  private flush(): void {
    this.scheduled = false;
    const taken = this.queue.splice(0, this.maxBatch);
    if (this.queue.length > 0) {
      this.scheduled = true;
      setImmediate(() => this.flush());
    }
    const { results, messages } = this.monitor.runBatch(taken.map((p) => p.job));
    // each answer below is final: the request's onSend need not wait for a flush of its own
    for (const p of taken) if (p.mark) p.mark.flushed = true;
    const answer = () =>
      results.forEach((r, i) => {
        const pending = taken[i] as Pending;
        if (r.ok) pending.resolve(r.value);
        else pending.reject(r.error);
      });
    if (!results.some((r) => r.ok)) {
      // nothing was written: nothing to wait for
      answer();
      return;
    }
    this.wal.durable().then(
      () => {
        this.monitor.send(messages);
        answer();
      },
      // committed but not known to be on the disk: the caller may send the same clientId again,
      // which answers with the stored check once it is
      (error: unknown) => {
        const failure = new DomainError(503, 'not-flushed', `the check could not be flushed to the disk (${error instanceof Error ? error.message : String(error)}); send it again with the same clientId`);
        for (const p of taken) p.reject(failure);
      },
    );
  }
}
