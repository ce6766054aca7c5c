import { randomUUID } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import { fileFlusher, type FileFlusher } from '../../server/db/wal-sync.js';
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

  it('when checks arrive while a flush runs, then they wait for the next flush, which all of them share', async () => {
    await withHeldApp(async (t, lineId, held) => {
      const first = held.nextStart();
      const one = postCheck(t, lineId, weightsWithMean(503));
      await first;
      const flushesBefore = t.app.heft.wal.flushes;
      const more = Promise.all([1, 2, 3].map(() => postCheck(t, lineId, weightsWithMean(503.2))));
      // all three committed while the first flush is held (waiting on the rows, not on a clock)
      await expect.poll(() => (t.db.prepare('SELECT COUNT(*) AS n FROM checks').get() as { n: number }).n).toBe(4);
      const second = held.nextStart();
      held.release(); // the first flush ends: it began before the three were committed
      expect((await one).statusCode).toBe(201);
      await second;
      expect(t.app.heft.wal.flushes - flushesBefore).toBe(1);
      held.release();
      expect((await more).map((r) => r.statusCode)).toEqual([201, 201, 201]);
    });
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
