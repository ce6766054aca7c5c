import { spawn } from 'node:child_process';
import { once } from 'node:events';
import { createServer as createHttpServer, type IncomingHttpHeaders } from 'node:http';
import { createServer as createTcpServer, type AddressInfo, type Socket } from 'node:net';
import { join } from 'node:path';
import { SerialPortMock } from 'serialport';

// serialport's own mock binding (@serialport/binding-mock), the one SerialPortMock opens ports with
const MockBinding = SerialPortMock.binding;
import { describe, expect, it } from 'vitest';
import { ScaleBridge } from '../../server/scales/bridge.js';
import { serialSource, tcpSource, type SerialPortClass, type SerialPortLike } from '../../server/scales/line-sources.js';
import { BUILT_CLI } from '../build-server.js';
import { makeTestApp, removeDir, setupLine, type TestApp } from '../helpers.js';

/** Heft behind a switch: up, down (connections dropped), or up once with the answer lost after the server stored the check. */
async function switchedServer(t: TestApp) {
  const state = { mode: 'up' as 'up' | 'down' | 'lose-answer', lost: 0 };
  const server = createHttpServer((req, res) => {
    if (state.mode === 'down') {
      req.socket.destroy();
      return;
    }
    let body = '';
    req.on('data', (c) => (body += c));
    req.on('end', () => {
      const headers = { ...req.headers } as IncomingHttpHeaders;
      void t.app.inject({ method: req.method as 'GET' | 'POST', url: req.url as string, headers: headers as Record<string, string>, payload: body || undefined }).then((answer) => {
        if (state.mode === 'lose-answer' && req.method === 'POST') {
          state.mode = 'up';
          state.lost += 1;
          req.socket.destroy(); // stored, but the bridge never hears so
          return;
        }
        res.writeHead(answer.statusCode, { 'content-type': String(answer.headers['content-type'] ?? 'application/json') }).end(answer.body);
      });
    });
  });
  server.listen(0, '127.0.0.1');
  await once(server, 'listening');
  return { state, url: `http://127.0.0.1:${(server.address() as AddressInfo).port}`, close: () => new Promise<void>((r) => { server.closeAllConnections(); server.close(() => r()); }) };
}

/** A bench scale on a network port: the test writes its lines to whoever connects. */
async function networkScale() {
  const sockets: Socket[] = [];
  const waiters: (() => void)[] = [];
  const server = createTcpServer((s) => {
    sockets.push(s);
    for (const w of waiters.splice(0)) w();
  });
  server.listen(0, '127.0.0.1');
  await once(server, 'listening');
  const connection = async (n: number) => {
    while (sockets.length < n) await new Promise<void>((r) => waiters.push(r));
    return sockets[n - 1] as Socket;
  };
  return { port: (server.address() as AddressInfo).port, connection, close: () => new Promise<void>((r) => { for (const s of sockets) s.destroy(); server.close(() => r()); }) };
}

const stored = (t: TestApp) => t.db.prepare('SELECT client_id AS clientId, source FROM checks ORDER BY id').all() as { clientId: string; source: string }[];
const storedWeights = (t: TestApp) => (t.db.prepare('SELECT net FROM packs ORDER BY check_id, position').all() as { net: number }[]).map((p) => p.net);

describe('the scale bridge', () => {
  it('when a network scale sends readings and the server goes away meanwhile, then every check is stored exactly once, oldest first, and the scale is reconnected when dropped', async () => {
    const t = await makeTestApp({ realTime: true });
    const heft = await switchedServer(t);
    const scale = await networkScale();
    const logs: string[] = [];
    let bridge: ScaleBridge | null = null;
    try {
      const { lineId } = await setupLine(t);
      await t.app.inject({ method: 'PUT', url: `/api/lines/${lineId}/scale`, headers: { cookie: t.cookies.admin }, payload: { connection: 'bridge', unstablePattern: '^US' } });
      const { token } = t.app.heft.auth.createToken({ name: 'bridge on L1', kind: 'checks', lineIds: [lineId] }, 'test');
      bridge = new ScaleBridge({ server: heft.url, token, lineCode: 'L1', source: tcpSource('127.0.0.1', scale.port), queueFile: join(t.dir, 'bridge-queue.json'), log: (level, m) => logs.push(`${level} ${m}`), maxRetryMs: 100 });
      await bridge.start();
      const first = await scale.connection(1);
      const weigh = (socket: Socket, grams: number[]) => socket.write(grams.map((g) => `US,GS,+${(g - 3).toFixed(1)} g\r\nST,GS,+${g.toFixed(1).padStart(8, '0')} g\r\n`).join(''));
      const sent = [503.1, 502.4, 504.0, 501.8, 503.3];
      weigh(first, sent);
      await expect.poll(() => stored(t).length).toBe(1);

      heft.state.mode = 'down';
      const meanwhile = [502.9, 503.6, 502.2, 504.4, 503.0, 501.9, 503.8, 502.7, 503.2, 504.1];
      weigh(first, meanwhile);
      await expect.poll(() => bridge?.waiting).toBe(2);
      await expect.poll(() => logs.some((l) => l.includes('could not be reached'))).toBe(true);
      expect(stored(t)).toHaveLength(1);

      heft.state.mode = 'lose-answer';
      await expect.poll(() => bridge?.waiting, { timeout: 10_000 }).toBe(0);
      expect(heft.state.lost).toBe(1);

      // the scale's cable is pulled and put back: the bridge connects again by itself
      first.destroy();
      const second = await scale.connection(2);
      const after = [503.5, 502.8, 503.9, 502.1, 503.4];
      weigh(second, after);
      await expect.poll(() => stored(t).length).toBe(4);

      const checks = stored(t);
      expect(new Set(checks.map((c) => c.clientId)).size).toBe(4);
      expect(checks.every((c) => c.source === 'bridge')).toBe(true);
      expect(storedWeights(t)).toEqual([...sent, ...meanwhile, ...after]);
      expect([bridge.storedCount, bridge.stored]).toEqual([4, checks.map((c) => c.clientId)]);
      expect(logs.some((l) => l.startsWith('warn scale disconnected'))).toBe(true);
    } finally {
      await bridge?.stop();
      await scale.close();
      await heft.close();
      await t.close();
      removeDir(t.dir);
    }
  }, 30_000);

  it('when the bridge reads a serial scale (the serialport mock binding) in kg, then the packs go in the product’s grams and a check of five is stored', async () => {
    const t = await makeTestApp({ realTime: true });
    const heft = await switchedServer(t);
    let bridge: ScaleBridge | null = null;
    try {
      const { lineId } = await setupLine(t);
      const { token } = t.app.heft.auth.createToken({ name: 'bridge on L1', kind: 'checks', lineIds: [lineId] }, 'test');
      MockBinding.createPort('/dev/ttyHEFTSCALE', { echo: false, record: true });
      const logs: string[] = [];
      let opened: SerialPortLike | null = null;
      const source = serialSource(SerialPortMock as unknown as SerialPortClass, { path: '/dev/ttyHEFTSCALE', baudRate: 9600, dataBits: 8, parity: 'none', stopBits: 1 }, (p) => (opened = p));
      bridge = new ScaleBridge({ server: heft.url, token, lineCode: 'L1', source, queueFile: join(t.dir, 'bridge-queue.json'), log: (level, m) => logs.push(`${level} ${m}`) });
      await bridge.start();
      await expect.poll(() => opened !== null).toBe(true);
      const binding = (opened as unknown as { port: { emitData(data: string): void } }).port;
      binding.emitData('0,5031 kg\r\n0,5024 kg\r\nOVERLOAD\r\n0,5040 kg\r');
      binding.emitData('\n0,5018 kg\r\n0,5033 kg\r\n');
      await expect.poll(() => stored(t).length).toBe(1);
      expect(storedWeights(t)).toEqual([503.1, 502.4, 504, 501.8, 503.3]);
    } finally {
      await bridge?.stop();
      MockBinding.reset();
      await heft.close();
      await t.close();
      removeDir(t.dir);
    }
  }, 30_000);

  it('when the built CLI runs `scale --tcp`, then it reads the network scale with a pattern of its own and posts the check; SIGTERM stops it cleanly', async () => {
    const t = await makeTestApp({ realTime: true });
    const heft = await switchedServer(t);
    const scale = await networkScale();
    try {
      const { lineId } = await setupLine(t);
      const { token } = t.app.heft.auth.createToken({ name: 'bridge on L1', kind: 'checks', lineIds: [lineId] }, 'test');
      const args = [BUILT_CLI, 'scale', '--server', heft.url, '--line', 'L1', '--tcp', `127.0.0.1:${scale.port}`, '--pattern', String.raw`^W(?<weight>\d+\.\d+)`, '--packs', '3', '--queue', join(t.dir, 'q.json'), '--log-level', 'debug'];
      const child = spawn(process.execPath, args, { env: { ...process.env, HEFT_TOKEN: token }, stdio: ['ignore', 'pipe', 'pipe'] });
      let err = '';
      child.stderr.on('data', (d: Buffer) => (err += d.toString()));
      const exited = once(child, 'exit');
      const socket = await scale.connection(1);
      socket.write('W503.2;S\r\nW502.6;S\r\nW504.1;S\r\n');
      await expect.poll(() => stored(t).length, { timeout: 10_000 }).toBe(1);
      expect(storedWeights(t)).toEqual([503.2, 502.6, 504.1]);
      child.kill('SIGTERM');
      expect((await exited)[0]).toBe(0);
      expect(err).toMatch(/debug reading "W503\.2;S"/);
      expect(err).toMatch(/stopped; 0 check\(s\) wait/);
      expect(err).not.toContain(token); // the token stays out of the log
    } finally {
      await scale.close();
      await heft.close();
      await t.close();
      removeDir(t.dir);
    }
  }, 30_000);
});
