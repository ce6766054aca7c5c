import { spawn } from 'node:child_process';
import { randomUUID } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import { closeAfterEach, countRows, makeTestApp, postCheck, setupLine, weightsWithMean, type TestApp } from '../helpers.js';

let t: TestApp | null = null;
closeAfterEach(
  () => t,
  () => {
    t = null;
  },
);

const tables = ['checks', 'packs', 'signals', 'alerts', 'live_messages', 'line_monitor_state'];
const snapshot = (app: TestApp) => Object.fromEntries(tables.map((name) => [name, countRows(app.db, name)]));

describe('group commit', () => {
  it('when many checks arrive at once, then they share commits, each is answered, and a bad one fails alone', async () => {
    t = await makeTestApp();
    const { lineId } = await setupLine(t);
    t.clock.advance(3_600_000);
    const before = countRows(t.db, 'checks');
    const bodies = Array.from({ length: 30 }, (_, i) => (i === 17 ? [503, 50.3, 503] : weightsWithMean(503 + (i % 5) * 0.1)));
    const answers = await Promise.all(bodies.map((w) => postCheck(t as TestApp, lineId, w)));
    expect(answers.map((a) => a.statusCode).filter((s) => s === 201)).toHaveLength(29);
    expect(answers[17]?.statusCode).toBe(422);
    expect(countRows(t.db, 'checks')).toBe(before + 29);
    // strict per-line order: ids rise in the order the requests arrived, and so do the live messages
    const ids = answers.filter((a) => a.statusCode === 201).map((a) => a.json().check.id as number);
    expect(ids).toEqual([...ids].sort((a, b) => a - b));
    const live = t.events.filter((e) => e.type === 'check').map((e) => (e as unknown as { check: { id: number } }).check.id);
    expect(live.slice(-29)).toEqual(ids);
    // the detectors saw every check once: the segment holds all of them
    expect(t.app.heft.monitor.lineState(lineId).segment.count).toBe(29);
  });

  it('when one check of a batch fails while it is being written, then it alone is refused, nothing of it is stored, and the others go in once each', async () => {
    const app = await makeTestApp();
    t = app;
    const { lineId } = await setupLine(app);
    app.clock.advance(3_600_000);
    // a pack of exactly 507.7 g cannot be stored: the check row is written before its packs, so this
    // fails half-way through the check's writes
    app.db.exec("CREATE TRIGGER refuse_one_pack BEFORE INSERT ON packs WHEN NEW.net = 507.7 BEGIN SELECT RAISE(ABORT, 'test: this pack cannot be stored'); END");
    const before = snapshot(app);
    const bodies = Array.from({ length: 12 }, (_, i) => (i === 5 ? [503, 502, 507.7, 503, 504] : weightsWithMean(503 + (i % 3) * 0.1)));
    const answers = await Promise.all(bodies.map((w) => postCheck(app, lineId, w)));
    expect(answers.map((a) => a.statusCode)).toEqual(bodies.map((_, i) => (i === 5 ? 500 : 201)));
    const after = snapshot(app);
    expect([after.checks, after.packs]).toEqual([(before.checks ?? 0) + 11, (before.packs ?? 0) + 55]);
    // the line's memory matches what was stored: the 11 checks, each once
    expect(app.app.heft.monitor.lineState(lineId).segment.count).toBe(11);
    const ids = answers.filter((a) => a.statusCode === 201).map((a) => a.json().check.id as number);
    expect(new Set(ids).size).toBe(11);
    const live = app.events.filter((e) => e.type === 'check').map((e) => (e as unknown as { check: { id: number } }).check.id);
    expect(live.slice(-11)).toEqual(ids);
  });
});

describe('a full disk', () => {
  it('when the database cannot grow, then the check gets 503 with a clear message, nothing partial is stored, and the server goes on', async () => {
    t = await makeTestApp();
    const { lineId } = await setupLine(t);
    t.clock.advance(3_600_000);
    expect((await postCheck(t, lineId, weightsWithMean(503))).statusCode).toBe(201);
    const pages = t.db.pragma('page_count', { simple: true }) as number;
    t.db.pragma(`max_page_count = ${pages}`);
    const before = snapshot(t);
    let refused = null;
    let refusedClientId = '';
    let accepted = 0;
    // fill the last free pages, then the next check cannot be written
    for (let i = 0; i < 200 && !refused; i += 1) {
      t.clock.advance(60_000);
      const clientId = randomUUID();
      const res = await postCheck(t, lineId, weightsWithMean(503), { note: 'x'.repeat(400), clientId });
      if (res.statusCode === 201) accepted += 1;
      else {
        refused = res;
        refusedClientId = clientId;
      }
    }
    expect(refused?.statusCode).toBe(503);
    expect(refused?.json().message).toMatch(/disk is full: nothing was written/);
    const after = snapshot(t);
    // every check that got in has its packs; none is half-written
    expect(countRows(t.db, 'packs')).toBe(5 * countRows(t.db, 'checks'));
    // exactly the acknowledged checks were stored, and not the refused one
    expect(after.checks).toBe((before.checks ?? 0) + accepted);
    expect(t.db.prepare('SELECT COUNT(*) AS n FROM checks WHERE client_id = ?').get(refusedClientId)).toEqual({ n: 0 });
    t.db.pragma('max_page_count = 1073741823');
    t.clock.advance(60_000);
    expect((await postCheck(t, lineId, weightsWithMean(503))).statusCode).toBe(201);
    expect((await t.app.inject({ method: 'GET', url: '/api/health' })).statusCode).toBe(200);
  });
});

describe('a database locked by another process', () => {
  it('when another process holds the write lock, then the check waits for the busy timeout, gets 503, and goes in once the lock is gone', async () => {
    t = await makeTestApp();
    const { lineId } = await setupLine(t);
    t.db.pragma('busy_timeout = 400');
    const holder = spawn(
      process.execPath,
      [
        '-e',
        `const D = require('better-sqlite3'); const db = new D(process.argv[1]); db.exec('BEGIN EXCLUSIVE'); console.log('locked');
         process.stdin.on('data', () => { db.exec('ROLLBACK'); db.close(); console.log('released'); process.exit(0); });`,
        t.file,
      ],
      { cwd: new URL('../../', import.meta.url).pathname, stdio: ['pipe', 'pipe', 'inherit'] },
    );
    await new Promise<void>((resolve) => holder.stdout?.on('data', (d: Buffer) => d.toString().includes('locked') && resolve()));
    t.clock.advance(3_600_000);
    const before = countRows(t.db, 'checks');
    const started = Date.now();
    const res = await postCheck(t, lineId, weightsWithMean(503));
    const waited = Date.now() - started;
    expect(res.statusCode).toBe(503);
    expect(res.json().message).toMatch(/locked by another process/);
    expect(waited).toBeGreaterThanOrEqual(350);
    expect(waited).toBeLessThan(5000);
    holder.stdin?.write('go\n');
    await new Promise<void>((resolve) => holder.on('exit', () => resolve()));
    expect(countRows(t.db, 'checks')).toBe(before);
    const again = await postCheck(t, lineId, weightsWithMean(503), { clientId: randomUUID() });
    expect(again.statusCode).toBe(201);
  });
});
