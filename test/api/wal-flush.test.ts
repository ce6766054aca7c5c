import { randomUUID } from 'node:crypto';
import { readdirSync, readlinkSync, realpathSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { FLUSHES_AT_ONCE, fileFlusher, type FileFlusher } from '../../server/db/wal-sync.js';
import { makeTestApp, postCheck, removeDir, setupLine, weightsWithMean, type TestApp } from '../helpers.js';

/**
 * The writer commits with synchronous=NORMAL and every answer to a change waits for an fdatasync of
 * the WAL that began after the commit. A flusher the test holds shows that nothing is answered
 * before it (the real flush still runs once the test lets it go).
 */
function heldFlusher(walPath: () => string) {
  const gates: (() => void)[] = [];
  const started: (() => void)[] = [];
  let holding = false;
  let fail: Error | null = null;
  let real: FileFlusher | null = null;
  const flusher: FileFlusher = {
    async flush() {
      if (holding) {
        for (const s of started.splice(0)) s();
        await new Promise<void>((resolve) => gates.push(resolve));
        if (fail) throw fail;
      }
      real ??= fileFlusher(walPath());
      await real.flush();
    },
    close: () => real?.close(),
  };
  return {
    flusher,
    hold: () => {
      holding = true;
    },
    /** Resolves when the next flush starts. */
    nextStart: () => new Promise<void>((resolve) => started.push(resolve)),
    release: () => {
      for (const g of gates.splice(0)) g();
    },
    failNext: (e: Error) => {
      fail = e;
    },
    heal: () => {
      fail = null;
    },
    /** Lets every flush through from now on (so that closing the app is not held). */
    letGo: () => {
      holding = false;
      for (const g of gates.splice(0)) g();
    },
  };
}

/** Runs `body` with an app of its own whose flushes the test holds; closed even when the test fails. */
async function withHeldApp(body: (t: TestApp, lineId: number, held: ReturnType<typeof heldFlusher>) => Promise<void>) {
  let file = '';
  const held = heldFlusher(() => `${file}-wal`);
  const t = await makeTestApp({ walFlusher: held.flusher });
  file = t.file;
  try {
    const { lineId } = await setupLine(t);
    t.clock.advance(3_600_000);
    // the set-up's own flushes are over before the test holds any
    await t.app.heft.wal.settled();
    held.hold();
    await body(t, lineId, held);
  } finally {
    held.heal();
    held.letGo();
    await t.close();
    removeDir(t.dir);
  }
}

describe('answers wait for the disk', () => {
  it('when a check is committed, then its answer and its live message wait for a flush of the WAL that began after the commit', async () => {
    await withHeldApp(async (t, lineId, held) => {
      const started = held.nextStart();
      let answered = false;
      const liveBefore = t.events.length;
      const answer = postCheck(t, lineId, weightsWithMean(503)).then((r) => {
        answered = true;
        return r;
      });
      await started;
      // committed and visible in the database, but not answered, and no live message yet
      expect(t.db.prepare('SELECT COUNT(*) AS n FROM checks').get()).toEqual({ n: 1 });
      expect([answered, t.events.length - liveBefore, t.db.pragma('synchronous', { simple: true })]).toEqual([false, 0, 1]);
      held.release();
      const res = await answer;
      expect(res.statusCode).toBe(201);
      expect(t.events.slice(liveBefore).map((e) => e.type)).toContain('check');
    });
  });

  it('when checks arrive while flushes run, then each commit starts a flush of its own up to FLUSHES_AT_ONCE at a time, and past that the waiting checks share the next one', async () => {
    expect(FLUSHES_AT_ONCE).toBeGreaterThan(1);
    await withHeldApp(async (t, lineId, held) => {
      const flushesBefore = t.app.heft.wal.flushes;
      const first: ReturnType<typeof postCheck>[] = [];
      for (let i = 0; i < FLUSHES_AT_ONCE; i += 1) {
        const started = held.nextStart();
        first.push(postCheck(t, lineId, weightsWithMean(503)));
        await started; // this check's own flush began (and is held) while the ones before it are still held
      }
      expect(t.app.heft.wal.flushes - flushesBefore).toBe(FLUSHES_AT_ONCE);
      const more = Promise.all([1, 2, 3].map(() => postCheck(t, lineId, weightsWithMean(503.2))));
      // all three committed while every flush that may run is held (waiting on the rows, not on a clock)
      await expect.poll(() => (t.db.prepare('SELECT COUNT(*) AS n FROM checks').get() as { n: number }).n).toBe(FLUSHES_AT_ONCE + 3);
      expect(t.app.heft.wal.flushes - flushesBefore).toBe(FLUSHES_AT_ONCE);
      const next = held.nextStart();
      held.release(); // the held flushes end: they began before the three were committed
      expect((await Promise.all(first)).map((r) => r.statusCode)).toEqual(Array.from({ length: FLUSHES_AT_ONCE }, () => 201));
      await next;
      expect(t.app.heft.wal.flushes - flushesBefore).toBe(FLUSHES_AT_ONCE + 1);
      held.release();
      expect((await more).map((r) => r.statusCode)).toEqual([201, 201, 201]);
    });
  });

  it('when flushes overlap on the real file, then each ends and they share one descriptor, closed with the flusher', async () => {
    const t = await makeTestApp();
    try {
      const { lineId } = await setupLine(t);
      await t.app.heft.wal.settled();
      const wal = realpathSync(`${t.file}-wal`);
      // descriptors this process holds on the WAL file (SQLite's own, the app's flusher, this one)
      const onWal = () => readdirSync('/proc/self/fd').filter((fd) => {
        try {
          return readlinkSync(`/proc/self/fd/${fd}`) === wal;
        } catch {
          return false;
        }
      }).length;
      const before = onWal();
      const flusher = fileFlusher(wal);
      // eight at once, before any has opened the file: all succeed through one descriptor
      await Promise.all(Array.from({ length: 8 }, () => flusher.flush()));
      expect(onWal()).toBe(before + 1);
      const answers = await Promise.all(Array.from({ length: 12 }, () => postCheck(t, lineId, weightsWithMean(503))));
      expect(answers.map((r) => r.statusCode)).toEqual(Array.from({ length: 12 }, () => 201));
      flusher.close();
      // fs.close runs on the thread pool: wait for the descriptor to go
      await expect.poll(onWal).toBe(before);
      // closed: a flush after it opens the file again rather than use a closed descriptor
      await flusher.flush();
      expect(onWal()).toBe(before + 1);
      flusher.close();
    } finally {
      await t.close();
      removeDir(t.dir);
    }
  });

  it('when a product is changed, then that answer waits for a flush too; a read does not', async () => {
    await withHeldApp(async (t, _lineId, held) => {
      const started = held.nextStart();
      let answered = false;
      const patch = t.app.inject({ method: 'PATCH', url: '/api/products/1', headers: { cookie: t.cookies.quality }, payload: { name: 'Renamed bag' } }).then((r) => {
        answered = true;
        return r;
      });
      await started;
      expect(answered).toBe(false);
      // a read while the flush is held is answered at once
      expect((await t.app.inject({ method: 'GET', url: '/api/products/1', headers: { cookie: t.cookies.quality } })).json().product.name).toBe('Renamed bag');
      held.release();
      expect((await patch).statusCode).toBe(200);
    });
  });

  it('when the flush fails, then the check is answered 503 naming it, and sent again with the same clientId it is answered with the stored check', async () => {
    await withHeldApp(async (t, lineId, held) => {
      const clientId = randomUUID();
      held.failNext(Object.assign(new Error('EIO: i/o error, fdatasync'), { code: 'EIO' }));
      const started = held.nextStart();
      const refused = postCheck(t, lineId, weightsWithMean(503), { clientId });
      await started;
      held.release();
      const res = await refused;
      held.heal();
      expect(res.statusCode).toBe(503);
      expect(res.json().message).toMatch(/could not be flushed to the disk .*send it again with the same clientId/);
      const again = postCheck(t, lineId, weightsWithMean(503), { clientId });
      await held.nextStart();
      held.release();
      const replay = await again;
      expect(replay.statusCode).toBe(200);
      expect(t.db.prepare('SELECT COUNT(*) AS n FROM checks WHERE client_id = ?').get(clientId)).toEqual({ n: 1 });
      expect(replay.json().check.clientId).toBe(clientId);
    });
  });
});
