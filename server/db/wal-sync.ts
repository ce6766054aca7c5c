import { close, fdatasync, open } from 'node:fs';
import type { Db } from './database.js';

/**
 * Durability for the server's writer without holding up its event loop. The writer commits with
 * synchronous=NORMAL (in WAL mode: no fsync at commit, the WAL is synced before each checkpoint),
 * and nothing is answered until an fdatasync of the WAL file, run on libuv's thread pool, that
 * started after the commit has finished. fdatasync flushes the file's data whichever descriptor
 * wrote it, so every commit before it is then on the disk: what `synchronous=FULL` gives, with each
 * flush shared by every request waiting for it and the event loop free while the disk works.
 */
export interface WalSync {
  /**
   * Resolves once every change this connection made before the call is on the disk: at once when
   * nothing was written since the last flush began (or the database is in memory), else after a
   * flush that started after the call.
   */
  durable(): Promise<void>;
  /** Flushes started so far (for tests and the bench). */
  readonly flushes: number;
  /** Resolves when no flush is running or waiting to run (tests wait on it before they hold flushes). */
  settled(): Promise<void>;
  close(): void;
}

export interface FileFlusher {
  flush(): Promise<void>;
  close(): void;
}

/**
 * fdatasync of one file through a descriptor opened on first use and kept: SQLite keeps the WAL file
 * (truncating it at most) while the writer's connection is open, and the server holds that open.
 * Flushes may overlap: they share one descriptor, and one that went bad is closed only once no flush
 * uses it any more (closed earlier, its number could be given to another file that a flush then syncs).
 */
export function fileFlusher(path: string): FileFlusher {
  /** The descriptor, how many flushes use it now, and whether it went bad (then it is closed when they are done). */
  interface Handle {
    fd: number;
    users: number;
    bad: boolean;
  }
  let current: Handle | null = null;
  let opening: Promise<Handle | null> | null = null;
  const opened = () => {
    if (current) return Promise.resolve(current);
    opening ??= new Promise<Handle | null>((resolve, reject) =>
      open(path, 'r+', (error, fd) => {
        opening = null;
        // no WAL file yet: nothing was committed through it, so there is nothing to flush
        if (error) return error.code === 'ENOENT' ? resolve(null) : reject(error);
        current = { fd, users: 0, bad: false };
        resolve(current);
      }),
    );
    return opening;
  };
  const release = (handle: Handle) => {
    handle.users -= 1;
    if (handle.bad && handle.users === 0) close(handle.fd, () => undefined);
  };
  return {
    async flush() {
      const handle = await opened();
      if (handle === null) return;
      handle.users += 1;
      try {
        await new Promise<void>((resolve, reject) => fdatasync(handle.fd, (error) => (error ? reject(error) : resolve())));
      } catch (error) {
        // a descriptor gone bad is opened again next time
        handle.bad = true;
        if (current === handle) current = null;
        throw error;
      } finally {
        release(handle);
      }
    },
    close() {
      if (current) {
        current.bad = true;
        if (current.users === 0) close(current.fd, () => undefined);
      }
      current = null;
    },
  };
}

/**
 * How many flushes may run at once. A commit that finds a flush running starts one of its own rather
 * than wait for that one to end first: a flush's fdatasync also waits for whatever pages the flushes
 * before it are still writing, so each covers every commit before its start. Measured at 10
 * connections, answers waited ~1.3 ms for the disk instead of ~2.1 ms, and ingest rose by a tenth
 * to a sixth. Three leave one of libuv's four pool threads for everything else (sign-in's scrypt).
 */
export const FLUSHES_AT_ONCE = 3;

/** Switches the writer to synchronous=NORMAL and returns the flush every answer waits for. */
export function createWalSync(db: Db, flusher: FileFlusher | undefined = undefined): WalSync {
  if (db.memory) return { durable: () => Promise.resolve(), flushes: 0, settled: () => Promise.resolve(), close: () => undefined };
  db.pragma('synchronous = NORMAL');
  const disk = flusher ?? fileFlusher(`${db.name}-wal`);
  // rows this connection has inserted, changed or deleted since it opened: a flush that began at
  // count c makes every change up to c durable (what came before this point was written with FULL)
  const changes = db.prepare('SELECT total_changes()').pluck();
  const count = () => changes.get() as number;
  let flushedThrough = count();
  // in the order they began
  const running = new Set<Promise<void>>();
  let queued: Promise<void> | null = null;
  let flushes = 0;
  const start = (): Promise<void> => {
    flushes += 1;
    const through = count();
    const p: Promise<void> = disk
      .flush()
      .then(() => {
        flushedThrough = Math.max(flushedThrough, through);
      })
      .finally(() => {
        running.delete(p);
      });
    running.add(p);
    return p;
  };
  return {
    durable(): Promise<void> {
      if (count() <= flushedThrough) return Promise.resolve();
      if (running.size < FLUSHES_AT_ONCE) return start();
      // as many flushes run as may, and they began before the caller's commit: wait for the newest to
      // end, then one more, which every caller waiting meanwhile shares
      if (!queued) {
        const newest = [...running].at(-1) as Promise<void>;
        queued = newest
          .catch(() => undefined)
          .then(() => {
            queued = null;
            return start();
          });
      }
      return queued;
    },
    get flushes() {
      return flushes;
    },
    async settled() {
      while (queued || running.size > 0) await (queued ?? [...running][0])?.catch(() => undefined);
    },
    close: () => disk.close(),
  };
}
