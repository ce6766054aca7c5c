import { EventEmitter } from 'node:events';
import { describe, expect, it } from 'vitest';
import WebSocket from 'ws';
import { LiveHub } from '../../server/live/hub.js';
import { closeAfterEach, makeTestApp, postCheck, setupLine, weightsWithMean, type TestApp } from '../helpers.js';

let t: TestApp | null = null;
closeAfterEach(
  () => t,
  () => {
    t = null;
  },
);

async function listen(app: TestApp): Promise<number> {
  await app.app.listen({ port: 0, host: '127.0.0.1' });
  return (app.app.server.address() as { port: number }).port;
}

interface Received {
  seq: number;
  type: string;
}

function connect(port: number, cookie: string, since?: number) {
  const ws = new WebSocket(`ws://127.0.0.1:${port}/live${since === undefined ? '' : `?since=${since}`}`, { headers: { cookie } });
  const messages: Received[] = [];
  ws.on('message', (d) => messages.push(JSON.parse(String(d)) as Received));
  const opened = new Promise<void>((resolve, reject) => {
    ws.on('open', () => resolve());
    ws.on('unexpected-response', (req, res) => {
      req.destroy();
      reject(new Error(`status ${res.statusCode}`));
    });
    ws.on('error', reject);
  });
  return { ws, messages, opened };
}

/** Resolves once `test()` holds, checking it again each time `source` emits `event` (no polling). */
function when(source: EventEmitter, event: string, test: () => boolean, ms = 3000): Promise<void> {
  if (test()) return Promise.resolve();
  return new Promise((resolve, reject) => {
    const timer = setTimeout(() => {
      source.off(event, check);
      reject(new Error(`timed out waiting after ${event}`));
    }, ms);
    function check() {
      if (!test()) return;
      clearTimeout(timer);
      source.off(event, check);
      resolve();
    }
    source.on(event, check);
  });
}

describe('the live feed', () => {
  it('when a client resumes, then it first gets everything after its seq, in order, then follows live', async () => {
    t = await makeTestApp();
    const { lineId } = await setupLine(t);
    const port = await listen(t);
    for (const m of [503, 503.2, 510]) {
      t.clock.advance(3_600_000);
      await postCheck(t, lineId, weightsWithMean(m));
    }
    const c = connect(port, t.cookies.supervisor);
    await c.opened;
    c.ws.send(JSON.stringify({ type: 'resume', since: 1 }));
    await when(c.ws, 'message', () => c.messages.some((m) => m.type === 'resumed'));
    t.clock.advance(3_600_000);
    await postCheck(t, lineId, weightsWithMean(503));
    await when(c.ws, 'message', () => c.messages.filter((m) => m.type === 'check').length === 4);
    const numbered = c.messages.filter((m) => !['hello', 'resumed'].includes(m.type)).map((m) => m.seq);
    const stored = (t.db.prepare('SELECT seq FROM live_messages WHERE seq > 1 ORDER BY seq').all() as { seq: number }[]).map((r) => r.seq);
    expect(numbered).toEqual(stored);
    expect(c.messages.map((m) => m.type)).toContain('alert-opened');
    c.ws.close();
  });

  it('when a client is replayed the checks it missed, then each check message is the one sent live, the corrected one as entered', async () => {
    t = await makeTestApp();
    const { lineId } = await setupLine(t);
    const limits = await t.app.inject({ method: 'POST', url: `/api/lines/${lineId}/limits`, headers: { cookie: t.cookies.quality }, payload: { basis: 'standard', centre: 503, sigma: 2 } });
    expect(limits.statusCode).toBe(201);
    const port = await listen(t);
    const following = connect(port, t.cookies.supervisor);
    await following.opened;
    await when(following.ws, 'message', () => following.messages.some((m) => m.type === 'hello'));
    // in control, then far above the limits (opens an alert), then a second that joins it and is corrected
    for (const mean of [503, 503.4, 502.8, 512, 512]) {
      t.clock.advance(3_600_000);
      expect((await postCheck(t, lineId, weightsWithMean(mean))).statusCode).toBe(201);
    }
    const lastPosted = (t.db.prepare('SELECT MAX(id) AS id FROM checks').get() as { id: number }).id;
    const corrected = await t.app.inject({
      method: 'POST',
      url: `/api/checks/${lastPosted}/revisions`,
      headers: { cookie: t.cookies.operator },
      payload: { weights: weightsWithMean(511), clientId: crypto.randomUUID(), reason: 'keyed one pack twice' },
    });
    expect(corrected.statusCode).toBe(201);
    await when(following.ws, 'message', () => following.messages.filter((m) => m.type === 'check').length === 6);

    const replayed = connect(port, t.cookies.supervisor, 0);
    await replayed.opened;
    await when(replayed.ws, 'message', () => replayed.messages.some((m) => m.type === 'resumed'));
    const sentLive = following.messages.filter((m) => m.type === 'check') as unknown as { seq: number; check: { id: number; supersededBy: number | null; revisesCheckId: number | null }; signals: unknown[] }[];
    const bySeq = new Map(replayed.messages.map((m) => [m.seq, m]));
    for (const m of sentLive) expect(bySeq.get(m.seq)).toEqual(m);
    // what makes the comparison worth having: signals, a superseded check as it was entered, its revision
    expect(sentLive.filter((m) => m.signals.length > 0).length).toBeGreaterThanOrEqual(2);
    const superseded = sentLive.find((m) => m.check.id === lastPosted);
    expect(superseded?.check.supersededBy).toBeNull();
    expect((t.db.prepare('SELECT superseded_by FROM checks WHERE id = ?').get(lastPosted) as { superseded_by: number | null }).superseded_by).not.toBeNull();
    expect(sentLive.at(-1)?.check.revisesCheckId).toBe(lastPosted);
    // stored by reference: the envelope and the check's id, not the check again
    const stored = t.db.prepare('SELECT check_id AS checkId, length(payload) AS bytes FROM live_messages WHERE type = ? ORDER BY seq').all('check') as { checkId: number | null; bytes: number }[];
    expect(stored.map((r) => r.checkId)).toEqual(sentLive.map((m) => m.check.id));
    for (const r of stored) expect(r.bytes).toBeLessThan(100);
    following.ws.close();
    replayed.ws.close();
  });

  it('when a stored check message names a check that is not stored, then reading it back says so instead of skipping it', async () => {
    t = await makeTestApp();
    const seq = Number(t.db.prepare("INSERT INTO live_messages (at, type, line_id, payload, check_id) VALUES (1, 'check', 1, '{}', 999999)").run().lastInsertRowid);
    expect(() => t?.app.heft.repos.live.after(seq - 1, 10)).toThrow(`live message ${seq} is about check 999999, which is not stored`);
  });

  it('when the server restarts, then seq keeps increasing', async () => {
    t = await makeTestApp();
    const { lineId } = await setupLine(t);
    await postCheck(t, lineId, weightsWithMean(503));
    const before = t.app.heft.repos.live.latestSeq();
    t = await t.restart();
    t.clock.advance(60_000);
    await postCheck(t, lineId, weightsWithMean(503));
    expect(t.app.heft.repos.live.latestSeq()).toBeGreaterThan(before);
  });

  it('when nobody is signed in, then the upgrade is refused with 401', async () => {
    t = await makeTestApp();
    const port = await listen(t);
    await expect(connect(port, 'heft_session=nonsense').opened).rejects.toThrow(/401/);
  });

  it('when a client is forced off 100 times during a stream of checks, then after each resume it has every message exactly once, in order', async () => {
    t = await makeTestApp();
    const { lineId } = await setupLine(t);
    const port = await listen(t);
    const seen: number[] = [];
    let last = 0;
    let posted = 0;
    for (let round = 0; round < 100; round += 1) {
      const c = connect(port, t.cookies.operator, last);
      await c.opened;
      await when(c.ws, 'message', () => c.messages.some((m) => m.type === 'resumed' || m.type === 'resync'));
      t.clock.advance(60_000);
      await postCheck(t, lineId, weightsWithMean(503 + (round % 7) * 0.1));
      posted += 1;
      await when(c.ws, 'message', () => c.messages.some((m) => m.type === 'check' && m.seq > last));
      for (const m of c.messages) if (!['hello', 'resumed', 'resync'].includes(m.type)) seen.push(m.seq);
      last = Math.max(last, ...c.messages.map((m) => m.seq));
      c.ws.terminate();
      // and one more check while nobody is connected
      t.clock.advance(60_000);
      await postCheck(t, lineId, weightsWithMean(503));
      posted += 1;
    }
    const c = connect(port, t.cookies.operator, last);
    await c.opened;
    await when(c.ws, 'message', () => c.messages.some((m) => m.type === 'resumed'));
    for (const m of c.messages) if (!['hello', 'resumed'].includes(m.type)) seen.push(m.seq);
    c.ws.close();
    const stored = (t.db.prepare('SELECT seq FROM live_messages ORDER BY seq').all() as { seq: number }[]).map((r) => r.seq);
    expect(seen).toEqual(stored);
    expect(new Set(seen).size).toBe(seen.length);
    expect(seen.length).toBeGreaterThanOrEqual(posted);
  }, 60_000);
});

/** A stand-in socket: records what was sent and lets the test set how much is still unsent. */
class FakeSocket extends EventEmitter {
  readonly OPEN = 1;
  readyState = 1;
  bufferedAmount = 0;
  sent: (string | Buffer)[] = [];
  terminated = false;
  pings = 0;
  send(text: string | Buffer, _options?: unknown) {
    this.sent.push(text);
  }
  ping() {
    this.pings += 1;
  }
  terminate() {
    this.terminated = true;
    this.readyState = 3;
    this.emit('close');
  }
  close() {
    this.terminate();
  }
}

describe('the hub’s limits', () => {
  it('when a client’s send buffer passes the bound, then it is dropped instead of growing the server’s memory', async () => {
    t = await makeTestApp();
    const live = t.app.heft.repos.live;
    const hub = new LiveHub({ live, maxBufferedBytes: 10_000, resumeGraceMs: 0 });
    const slow = new FakeSocket();
    const fast = new FakeSocket();
    hub.attach(slow as unknown as WebSocket, 0);
    hub.attach(fast as unknown as WebSocket, 0);
    slow.bufferedAmount = 9_990;
    const messages = t.db.transaction(() => [live.append({ type: 'check', at: 1, lineId: 1, body: { padding: 'x'.repeat(100) } })])();
    hub.publish(messages);
    expect(slow.terminated).toBe(true);
    expect(fast.terminated).toBe(false);
    expect(String(fast.sent.at(-1))).toContain('"padding"');
    expect(hub.stats.dropped).toBe(1);
    expect(hub.stats.clients).toBe(1);
    hub.close();
  });

  it('when a client stops answering pings, then the heartbeat drops it', async () => {
    t = await makeTestApp();
    const hub = new LiveHub({ live: t.app.heft.repos.live, heartbeatMs: 20, resumeGraceMs: 0 });
    const silent = new FakeSocket();
    const lively = new FakeSocket();
    lively.ping = () => {
      lively.pings += 1;
      queueMicrotask(() => lively.emit('pong'));
    };
    hub.attach(silent as unknown as WebSocket, 0);
    hub.attach(lively as unknown as WebSocket, 0);
    await when(silent, 'close', () => silent.terminated, 1000);
    expect(lively.terminated).toBe(false);
    expect(lively.pings).toBeGreaterThanOrEqual(2);
    hub.close();
  });

  it('when a client resumes from beyond what storage holds, then it is told to resync', async () => {
    t = await makeTestApp();
    const hub = new LiveHub({ live: t.app.heft.repos.live, resumeGraceMs: 0 });
    const s = new FakeSocket();
    hub.attach(s as unknown as WebSocket, 999_999);
    expect(s.sent.map((x) => JSON.parse(String(x)).type)).toEqual(['hello', 'resync']);
    hub.close();
  });
});
