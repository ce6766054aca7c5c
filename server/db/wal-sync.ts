import { close, fdatasync, open } from 'node:fs';
import type { Db } from './database.js';

/**
 * Durability for the server's writer without holding up its event loop. The writer commits with
 * synchronous=NORMAL (in WAL mode: no fsync at commit, the WAL is synced before each checkpoint),
 * and nothing is answered until an fdatasync of the WAL file, run on libuv's thread pool, that
 * started after the commit has finished. fdatasync flushes the file's data whichever descriptor
 * wrote it, so every commit before it is then on the disk: what `synchronous=FULL` gives, with one
 * flush shared by every request waiting at once and the event loop free while the disk works.
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
 */
export function fileFlusher(path: string): FileFlusher {
  let fd: number | null = null;
  const opened = (): Promise<number | null> =>
    fd !== null
      ? Promise.resolve(fd)
      : new Promise((resolve, reject) =>
          open(path, 'r+', (error, got) => {
            // no WAL file yet: nothing was committed through it, so there is nothing to flush
            if (error) return error.code === 'ENOENT' ? resolve(null) : reject(error);
            fd = got;
            resolve(got);
          }),
        );
  return {
    async flush() {
      const handle = await opened();
      if (handle === null) return;
      await new Promise<void>((resolve, reject) =>
        fdatasync(handle, (error) => {
          if (!error) return resolve();
          // a descriptor gone bad is opened again next time
          if (fd === handle) fd = null;
          close(handle, () => reject(error));
        }),
      );
    },
    close() {
      if (fd !== null) close(fd, () => undefined);
      fd = null;
    },
  };
}

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
  let running: Promise<void> | null = null;
  let queued: Promise<void> | null = null;
  let flushes = 0;
  const start = (): Promise<void> => {
    flushes += 1;
    const through = count();
    const p = disk
      .flush()
      .then(() => {
        flushedThrough = Math.max(flushedThrough, through);
      })
      .finally(() => {
        if (running === p) running = null;
      });
    running = p;
    return p;
  };
  return {
    durable(): Promise<void> {
      if (count() <= flushedThrough) return Promise.resolve();
      if (!running) return start();
      // the running flush may have begun before the caller's commit: wait for the next one, shared
      if (!queued) {
        queued = running
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
      while (queued || running) await (queued ?? running)?.catch(() => undefined);
    },
    close: () => disk.close(),
  };
}
