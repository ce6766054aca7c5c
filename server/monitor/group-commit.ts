import type { Monitor } from './monitor.js';

interface Pending {
  job: () => unknown;
  resolve: (value: unknown) => void;
  reject: (error: unknown) => void;
}

/**
 * Collects the checks that arrive in one event-loop turn and commits them together (one fsync for
 * all), answering each request only after that commit. Under load the disk's flush rate, not one
 * commit per request, sets the pace; alone, a check waits only for the next turn.
 */
export class GroupCommitter {
  private queue: Pending[] = [];
  private scheduled = false;

  constructor(
    private readonly monitor: Monitor,
    private readonly maxBatch = 256,
  ) {}

  submit<T>(job: () => T): Promise<T> {
    return new Promise<T>((resolve, reject) => {
      this.queue.push({ job, resolve: resolve as (v: unknown) => void, reject });
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
    const results = this.monitor.runBatch(taken.map((p) => p.job));
    results.forEach((r, i) => {
      const pending = taken[i] as Pending;
      if (r.ok) pending.resolve(r.value);
      else pending.reject(r.error);
    });
  }
}
