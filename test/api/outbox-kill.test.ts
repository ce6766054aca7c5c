import { once } from 'node:events';
import { randomBytes } from 'node:crypto';
import { mkdtempSync } from 'node:fs';
import { createServer, type IncomingMessage, type ServerResponse } from 'node:http';
import type { AddressInfo } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Webhook } from 'standardwebhooks';
import { describe, expect, it } from 'vitest';
import { openDatabase, openReadOnly } from '../../server/db/database.js';
import { createEscalationRepository } from '../../server/escalations/repository.js';
import { mulberry32 } from '../../server/stats/random.js';
import { prepareLineDatabase, startBuiltServer } from '../child-server.js';
import { removeDir } from '../helpers.js';

interface Received {
  headers: IncomingMessage['headers'];
  body: string;
  res: ServerResponse;
}

/** A webhook receiver that answers nothing until told: each request waits in `received` for the test. */
async function holdingReceiver() {
  const received: Received[] = [];
  const waiters: (() => void)[] = [];
  const server = createServer((req, res) => {
    let body = '';
    req.on('data', (c) => (body += c));
    req.on('end', () => {
      received.push({ headers: req.headers, body, res });
      for (const w of waiters.splice(0)) w();
    });
  });
  server.listen(0, '127.0.0.1');
  await once(server, 'listening');
  const requestNumber = async (n: number) => {
    while (received.length < n) await new Promise<void>((r) => waiters.push(r));
    return received[n - 1] as Received;
  };
  const close = () => {
    server.closeAllConnections();
    return new Promise<void>((r) => server.close(() => r()));
  };
  return { received, requestNumber, url: `http://127.0.0.1:${(server.address() as AddressInfo).port}/heft`, close };
}

describe('the escalation outbox under kill -9', () => {
  it('when the server is killed while a webhook is in flight, then after the restart it is sent again exactly once, with the same id and a valid signature', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'heft-outbox-kill-'));
    const file = join(dir, 'heft.db');
    const receiver = await holdingReceiver();
    try {
      const token = prepareLineDatabase(file);
      const secret = `whsec_${randomBytes(24).toString('base64')}`;
      const setup = openDatabase(file);
      createEscalationRepository(setup).createRule(
        { name: 'night supervisor', channel: 'webhook', target: receiver.url, severity: 'act', afterMinutes: 0, lineIds: null },
        secret,
        Date.now() - 60_000,
      );
      setup.close();
      const port = 21000 + Math.floor(mulberry32(20261203)() * 20000); // seeded: a failing run can be repeated

      let server = await startBuiltServer(file, port);
      // a check far above the limits opens an act-level alert; its webhook is stored with the check's commit
      const res = await fetch(`http://127.0.0.1:${port}/api/lines/1/checks`, {
        method: 'POST',
        headers: { 'content-type': 'application/json', authorization: `Bearer ${token}` },
        body: JSON.stringify({ weights: [520, 521, 519.5, 520.5, 520], clientId: '3b0c6a52-2a41-4c58-9a5b-6d1f3e7c9a10' }),
      });
      expect(res.status).toBe(201);
      const first = await receiver.requestNumber(1);
      // the request is out, its answer never comes: the server dies before it learns the result
      const exited = once(server, 'exit');
      server.kill('SIGKILL');
      await exited;
      const afterKill = openReadOnly(file);
      const row = () => afterKill.prepare('SELECT message_id AS id, status, attempts FROM notifications').all() as { id: string; status: string; attempts: number }[];
      expect(row()).toEqual([{ id: first.headers['webhook-id'], status: 'pending', attempts: 0 }]);

      server = await startBuiltServer(file, port);
      const second = await receiver.requestNumber(2);
      second.res.writeHead(204).end();
      await expect.poll(() => row()[0]?.status, { timeout: 10_000 }).toBe('sent');
      const stopped = once(server, 'exit');
      server.kill('SIGTERM');
      await stopped;
      expect(row()).toEqual([{ id: first.headers['webhook-id'], status: 'sent', attempts: 1 }]);
      afterKill.close();

      // the same event both times, by the same id (a receiver drops the repeat by it), signed for each attempt
      expect(receiver.received).toHaveLength(2);
      expect(second.headers['webhook-id']).toBe(first.headers['webhook-id']);
      expect(second.body).toBe(first.body);
      const verified = new Webhook(secret).verify(second.body, second.headers as Record<string, string>) as { type: string; data: { line: { code: string } } };
      expect([verified.type, verified.data.line.code]).toEqual(['alert.opened', 'L1']);
    } finally {
      await receiver.close();
      removeDir(dir);
    }
  }, 60_000);
});
