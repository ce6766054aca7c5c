import { createRequire } from 'node:module';
import { Worker } from 'node:worker_threads';
import type { Db } from './database.js';

/**
 * WAL checkpoints on a thread of their own. SQLite's automatic checkpoint runs inside the commit that
 * crosses its threshold, on the writer's thread: every few hundred checks one commit copied ~4 MB
 * into the database file and synced it while the event loop waited (about a third of the engine's
 * time per check, measured). Here a second connection in a worker thread runs PASSIVE checkpoints
 * (they never block the writer) every `everyMs`; the writer's own automatic checkpoint stays as a
 * fallback at a far higher threshold, in case the worker falls behind.
 */
export interface Checkpointer {
  /** Checkpoints the worker has run, and the last one's result (for tests and the bench). */
  readonly runs: number;
  readonly last: { busy: number; log: number; checkpointed: number } | null;
  /** Resolves after the next checkpoint the worker runs. */
  next(): Promise<void>;
  stop(): Promise<void>;
}

const WORKER = `
const { parentPort, workerData } = require('node:worker_threads');
const Database = require(workerData.driver);
const db = new Database(workerData.file, { fileMustExist: true });
// the checkpoint syncs the WAL before it copies and the database file after
db.pragma('synchronous = FULL');
db.pragma('busy_timeout = 100');
const run = () => {
  try {
    parentPort.postMessage({ result: db.pragma('wal_checkpoint(PASSIVE)')[0] });
  } catch (error) {
    parentPort.postMessage({ error: String(error) });
  }
};
const timer = setInterval(run, workerData.everyMs);
parentPort.on('message', (m) => {
  if (m === 'stop') {
    clearInterval(timer);
    db.close();
    parentPort.close();
  }
});
`;

/** With a checkpointer, the writer checkpoints by itself only past this many WAL pages (~40 MB). */
export const FALLBACK_AUTOCHECKPOINT_PAGES = 10_000;

export function startCheckpointer(db: Db, options: { everyMs?: number; log?: (message: string) => void } = {}): Checkpointer | null {
  if (db.memory) return null;
  const driver = createRequire(import.meta.url).resolve('better-sqlite3');
  const worker = new Worker(WORKER, { eval: true, workerData: { file: db.name, driver, everyMs: options.everyMs ?? 200 } });
  worker.unref();
  db.pragma(`wal_autocheckpoint = ${FALLBACK_AUTOCHECKPOINT_PAGES}`);
  let runs = 0;
  let last: Checkpointer['last'] = null;
  let waiting: (() => void)[] = [];
  worker.on('message', (m: { result?: Checkpointer['last']; error?: string }) => {
    runs += 1;
    if (m.error) options.log?.(`a WAL checkpoint failed: ${m.error}`);
    else last = m.result ?? null;
    const done = waiting;
    waiting = [];
    for (const w of done) w();
  });
  worker.on('error', (err) => options.log?.(`the checkpoint thread stopped: ${err.message}`));
  const exited = new Promise<void>((resolve) => worker.once('exit', () => resolve()));
  return {
    get runs() {
      return runs;
    },
    get last() {
      return last;
    },
    next: () => new Promise<void>((resolve) => waiting.push(resolve)),
    async stop() {
      // held while it closes its connection, so that the process waits for it
      worker.ref();
      worker.postMessage('stop');
      await exited;
      // the writer checkpoints by itself again, as SQLite does by default
      if (db.open) db.pragma('wal_autocheckpoint = 1000');
    },
  };
}
