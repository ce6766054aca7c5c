import { once } from 'node:events';
import { createServer, type IncomingMessage, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { simpleParser, type ParsedMail } from 'mailparser';
import { SMTPServer } from 'smtp-server';
import { Webhook } from 'standardwebhooks';
import { afterEach, describe, expect, it } from 'vitest';
import { countRows, heftTest, makeTestApp, postCheck, removeDir, setupLine, weightsWithMean, type TestApp } from '../helpers.js';

const MINUTE = 60_000;

/** A receiver of webhooks in the test: records every request and answers with the statuses queued (then 200). */
async function webhookReceiver() {
  const received: { headers: IncomingMessage['headers']; body: string }[] = [];
  const statuses: number[] = [];
  const server: Server = createServer((req, res) => {
    let body = '';
    req.on('data', (c) => (body += c));
    req.on('end', () => {
      received.push({ headers: req.headers, body });
      res.writeHead(statuses.shift() ?? 200).end();
    });
  });
  server.listen(0, '127.0.0.1');
  await once(server, 'listening');
  const url = `http://127.0.0.1:${(server.address() as AddressInfo).port}/heft`;
  return { received, statuses, url, close: () => new Promise<void>((r) => server.close(() => r())) };
}

/** A real SMTP server in the test process (smtp-server), keeping each message parsed. */
async function mailServer() {
  const mails: ParsedMail[] = [];
  const server = new SMTPServer({
    authOptional: true,
    disabledCommands: ['STARTTLS'],
    onData(stream, _session, done) {
      simpleParser(stream)
        .then((m) => mails.push(m))
        .then(() => done(), done);
    },
  });
  server.listen(0, '127.0.0.1');
  await once(server.server, 'listening');
  const port = (server.server.address() as AddressInfo).port;
  return { mails, url: `smtp://127.0.0.1:${port}`, close: () => new Promise<void>((r) => server.close(() => r())) };
}

const rule = (t: TestApp, payload: Record<string, unknown>) => t.app.inject({ method: 'POST', url: '/api/escalations', headers: { cookie: t.cookies.quality }, payload });

/** An act-level alert: a check far above the limits. */
async function actAlert(t: TestApp, lineId: number): Promise<number> {
  const res = await postCheck(t, lineId, weightsWithMean(515));
  const alert = res.json().alerts.find((a: { severity: string }) => a.severity === 'act');
  expect(alert).toBeDefined();
  return alert.id as number;
}

const cleanups: (() => Promise<void>)[] = [];
afterEach(async () => {
  for (const c of cleanups.splice(0)) await c();
});

describe('escalation', () => {
  heftTest('when a webhook rule is made, then its secret is shown once, the rule lists without it, and a bad address is refused by field', async ({ heft: t }) => {
    const bad = await rule(t, { name: 'night', channel: 'webhook', to: 'ftp://x', severity: 'act', afterMinutes: 0 });
    expect(bad.statusCode).toBe(400);
    expect(bad.json().issues[0].field).toBe('to');
    const badMail = await rule(t, { name: 'night', channel: 'email', to: 'not an address', severity: 'act', afterMinutes: 0 });
    expect(badMail.json().issues[0].field).toBe('to');
    expect(countRows(t.db, 'escalation_rules')).toBe(0);
    const made = await rule(t, { name: 'night supervisor', channel: 'webhook', to: 'https://hooks.example/heft', severity: 'act', afterMinutes: 0 });
    expect(made.statusCode).toBe(201);
    expect(made.json().secret).toMatch(/^whsec_[A-Za-z0-9+/=]{32}$/);
    const list = (await t.app.inject({ method: 'GET', url: '/api/escalations', headers: { cookie: t.cookies.quality } })).json();
    expect(JSON.stringify(list)).not.toContain(made.json().secret);
    expect(list.rules.map((r: { name: string; enabled: boolean }) => [r.name, r.enabled])).toEqual([['night supervisor', true]]);
  });

  heftTest('when an act alert opens, then the webhook gets a body signed by Standard Webhooks that the library’s own verify accepts', async ({ heft: t }) => {
    const hook = await webhookReceiver();
    cleanups.push(hook.close);
    const { lineId } = await setupLine(t);
    const { secret } = (await rule(t, { name: 'night supervisor', channel: 'webhook', to: hook.url, severity: 'act', afterMinutes: 0 })).json();
    const alertId = await actAlert(t, lineId);
    expect(t.app.heft.escalations.sweep()).toBe(1);
    expect(await t.app.heft.escalations.deliverDue()).toBe(1);
    expect(hook.received).toHaveLength(1);
    const [got] = hook.received;
    if (process.env.HEFT_SHOW_MAIL) console.log(JSON.stringify({ headers: got?.headers, body: JSON.parse(got?.body ?? '{}') }, null, 2));
    const headers = { 'webhook-id': String(got?.headers['webhook-id']), 'webhook-timestamp': String(got?.headers['webhook-timestamp']), 'webhook-signature': String(got?.headers['webhook-signature']) };
    const payload = new Webhook(secret).verify(got?.body as string, headers) as { type: string; data: { alert: { id: number; severity: string }; line: { id: number; code: string } } };
    expect([payload.type, payload.data.alert.id, payload.data.alert.severity, payload.data.line.code]).toEqual(['alert.opened', alertId, 'act', 'L1']);
    expect(() => new Webhook(`whsec_${Buffer.from('another secret of 24 b.').toString('base64')}`).verify(got?.body as string, headers)).toThrow();
    const detail = (await t.app.inject({ method: 'GET', url: `/api/alerts/${alertId}`, headers: { cookie: t.cookies.supervisor } })).json();
    expect(detail.notifications.map((n: { rule: string; channel: string; status: string; attempts: number }) => [n.rule, n.channel, n.status, n.attempts])).toEqual([['night supervisor', 'webhook', 'sent', 1]]);
    // the boards hear at once who was told: a live alert-updated message carries it
    const live = t.events.filter((e) => e.type === 'alert-updated' && 'alert' in e && (e.alert as { id: number }).id === alertId);
    expect(live.map((e) => ('alert' in e ? (e.alert as { told?: { rule: string }[] }).told?.map((x) => x.rule) : null))).toEqual([['night supervisor']]);
    // the alert's own view (lists, the board's card) says who was told and when
    expect(detail.alert.told).toEqual([{ rule: 'night supervisor', channel: 'webhook', at: new Date(t.clock.now()).toISOString() }]);
    const listed = (await t.app.inject({ method: 'GET', url: '/api/alerts?state=open', headers: { cookie: t.cookies.supervisor } })).json().alerts;
    expect(listed.find((x: { id: number }) => x.id === alertId).told.map((x: { rule: string }) => x.rule)).toEqual(['night supervisor']);
    // acknowledging tells the same webhook, once
    await t.app.inject({ method: 'POST', url: `/api/alerts/${alertId}/acknowledge`, headers: { cookie: t.cookies.supervisor }, payload: { note: 'on my way' } });
    expect(t.app.heft.escalations.sweep()).toBe(1);
    await t.app.heft.escalations.deliverDue();
    expect(t.app.heft.escalations.sweep()).toBe(0);
    expect(hook.received.map((r) => JSON.parse(r.body).type)).toEqual(['alert.opened', 'alert.acknowledged']);
  });

  heftTest('when the receiver answers 503, then the same id is tried again after a wait, none after a 2xx, and a 410 disables the rule', async ({ heft: t }) => {
    const hook = await webhookReceiver();
    cleanups.push(hook.close);
    const { lineId } = await setupLine(t);
    const made = (await rule(t, { name: 'quality manager', channel: 'webhook', to: hook.url, severity: 'watch', afterMinutes: 0 })).json();
    await actAlert(t, lineId);
    t.app.heft.escalations.sweep();
    hook.statuses.push(503, 503);
    await t.app.heft.escalations.deliverDue();
    await t.app.heft.escalations.deliverDue(); // not due again yet: no second request
    expect(hook.received).toHaveLength(1);
    t.clock.advance(30_000);
    await t.app.heft.escalations.deliverDue();
    t.clock.advance(60_000);
    await t.app.heft.escalations.deliverDue(); // third attempt answers 200
    t.clock.advance(60 * MINUTE);
    await t.app.heft.escalations.deliverDue();
    const ids = hook.received.map((r) => r.headers['webhook-id']);
    expect(ids).toHaveLength(3);
    expect(new Set(ids).size).toBe(1);

    // the next alert's delivery answers 410: no retry, and the rule is switched off with the reason
    hook.statuses.push(410);
    await postCheck(t, lineId, weightsWithMean(488)); // a second act alert, downwards
    t.app.heft.escalations.sweep();
    await t.app.heft.escalations.deliverDue();
    t.clock.advance(2 * 60 * MINUTE);
    t.app.heft.escalations.sweep();
    await t.app.heft.escalations.deliverDue();
    expect(hook.received).toHaveLength(4);
    const after = (await t.app.inject({ method: 'GET', url: '/api/escalations', headers: { cookie: t.cookies.quality } })).json().rules[0];
    expect([after.id, after.enabled, after.disabledReason]).toEqual([made.rule.id, false, expect.stringMatching(/410 Gone/)]);
  });

  heftTest('when the rule’s delay passes with the alert still open, then the next level is told; acknowledging first stops it', async ({ heft: t }) => {
    const hook = await webhookReceiver();
    cleanups.push(hook.close);
    const { lineId } = await setupLine(t);
    await rule(t, { name: 'supervisor', channel: 'webhook', to: `${hook.url}/supervisor`, severity: 'act', afterMinutes: 0 });
    await rule(t, { name: 'quality manager after 30 min', channel: 'webhook', to: `${hook.url}/quality`, severity: 'act', afterMinutes: 30 });
    const first = await actAlert(t, lineId);
    t.app.heft.escalations.sweep();
    t.clock.advance(29 * MINUTE);
    expect(t.app.heft.escalations.sweep()).toBe(0);
    t.clock.advance(2 * MINUTE);
    expect(t.app.heft.escalations.sweep()).toBe(1);
    await t.app.heft.escalations.deliverDue();
    const types = hook.received.map((r) => JSON.parse(r.body).type);
    expect(types).toEqual(['alert.opened', 'alert.escalated']);
    // the second alert is acknowledged within the half hour: the quality manager hears nothing of it
    await t.app.inject({ method: 'POST', url: `/api/alerts/${first}/resolve`, headers: { cookie: t.cookies.supervisor }, payload: { cause: 'film splice', action: 'removed' } });
    const second = await actAlert(t, lineId);
    t.app.heft.escalations.sweep();
    t.clock.advance(10 * MINUTE);
    await t.app.inject({ method: 'POST', url: `/api/alerts/${second}/acknowledge`, headers: { cookie: t.cookies.supervisor }, payload: { note: 'seen' } });
    t.clock.advance(60 * MINUTE);
    t.app.heft.escalations.sweep();
    await t.app.heft.escalations.deliverDue();
    const toQuality = t.app.heft.escalations.notificationsOf(second).filter((n) => n.ruleName.startsWith('quality'));
    expect(toQuality).toEqual([]);
  });

  it('when an e-mail rule’s time comes, then the SMTP server receives the line, kind, direction, size, rules, onset and the board link, and no secret', async () => {
    const smtp = await mailServer();
    cleanups.push(smtp.close);
    const t = await makeTestApp({ config: { smtpUrl: smtp.url, mailFrom: 'Heft <heft@plant.example>', publicUrl: 'https://heft.plant.example' } });
    cleanups.push(async () => {
      await t.close();
      removeDir(t.dir);
    });
    const { lineId } = await setupLine(t);
    await rule(t, { name: 'night supervisor', channel: 'email', to: 'night.supervisor@plant.example', severity: 'act', afterMinutes: 0 });
    const alertId = await actAlert(t, lineId);
    t.app.heft.escalations.sweep();
    await t.app.heft.escalations.deliverDue();
    expect(smtp.mails).toHaveLength(1);
    const mail = smtp.mails[0] as ParsedMail;
    expect(mail.subject).toBe('[Heft] act: mean shift up on L1 Line L1');
    expect(mail.from?.text).toBe('"Heft" <heft@plant.example>');
    const text = mail.text ?? '';
    if (process.env.HEFT_SHOW_MAIL) console.log(`${mail.subject}\n\n${text}`);
    for (const line of ['Line: L1 Line L1', `Alert: mean shift up (act), alert ${alertId}`, 'Rules: beyond 3σ', 'Size: +12.0 g (6.0σ of one pack)', 'Began about:', `Open it: https://heft.plant.example/board?line=${lineId}`]) expect(text).toContain(line);
    expect(mail.html).toContain('<a href="https://heft.plant.example/board?line=');
    expect(text).not.toMatch(/whsec_|password|secret/i);
    expect(text.split('\n')[0]).toBe('Act: mean shift up on L1 Line L1, just raised.');
    const detail = (await t.app.inject({ method: 'GET', url: `/api/alerts/${alertId}`, headers: { cookie: t.cookies.supervisor } })).json();
    expect(detail.notifications[0]).toMatchObject({ rule: 'night supervisor', channel: 'email', to: 'night.supervisor@plant.example', status: 'sent' });
    // the next level's message says how long the alert has stood unacknowledged
    await rule(t, { name: 'quality manager', channel: 'email', to: 'quality@plant.example', severity: 'act', afterMinutes: 30 });
    t.clock.advance(30 * MINUTE);
    t.app.heft.escalations.sweep();
    await t.app.heft.escalations.deliverDue();
    expect(smtp.mails.map((m) => [m.to && 'text' in m.to ? m.to.text : '', (m.text ?? '').split('\n')[0]])).toEqual([
      ['night.supervisor@plant.example', 'Act: mean shift up on L1 Line L1, just raised.'],
      ['quality@plant.example', 'Act: mean shift up on L1 Line L1, not acknowledged after 30 min.'],
    ]);
  });

  heftTest('when the server stops between storing a delivery and sending it, then the next start sends it exactly once, with the stored id', async ({ heft: first }) => {
    const hook = await webhookReceiver();
    cleanups.push(hook.close);
    const { lineId } = await setupLine(first);
    await rule(first, { name: 'supervisor', channel: 'webhook', to: hook.url, severity: 'act', afterMinutes: 0 });
    await actAlert(first, lineId);
    expect(first.app.heft.escalations.sweep()).toBe(1); // committed to the outbox, not sent
    const stored = first.db.prepare('SELECT message_id AS id FROM notifications').get() as { id: string };
    await first.app.close();
    first.db.close();
    const again = await makeTestApp({ dir: first.dir, users: false, start: first.clock.now() + MINUTE });
    cleanups.push(async () => again.close());
    expect(again.app.heft.escalations.sweep()).toBe(0);
    await again.app.heft.escalations.deliverDue();
    await again.app.heft.escalations.deliverDue();
    expect(hook.received.map((r) => r.headers['webhook-id'])).toEqual([stored.id]);
  });

  heftTest('when an open alert is shelved, then it escalates no further, and comes back and escalates again when the time runs out', async ({ heft: t }) => {
    const hook = await webhookReceiver();
    cleanups.push(hook.close);
    const { lineId } = await setupLine(t);
    await rule(t, { name: 'supervisor after 20 min', channel: 'webhook', to: hook.url, severity: 'act', afterMinutes: 20 });
    const alertId = await actAlert(t, lineId);
    const tooLong = await t.app.inject({ method: 'POST', url: `/api/alerts/${alertId}/shelve`, headers: { cookie: t.cookies.supervisor }, payload: { minutes: 481, reason: 'x' } });
    expect(tooLong.json().issues[0].field).toBe('minutes');
    const shelved = await t.app.inject({ method: 'POST', url: `/api/alerts/${alertId}/shelve`, headers: { cookie: t.cookies.supervisor }, payload: { minutes: 120, reason: 'filler head 3 under repair, known' } });
    expect(shelved.statusCode).toBe(200);
    expect(shelved.json().alert).toMatchObject({ state: 'open', shelved: { by: 'supervisor', reason: 'filler head 3 under repair, known', times: 1 } });
    // still listed among the open alerts
    const open = (await t.app.inject({ method: 'GET', url: `/api/alerts?state=open&lineId=${lineId}`, headers: { cookie: t.cookies.supervisor } })).json().alerts;
    expect(open.map((a: { id: number }) => a.id)).toContain(alertId);
    for (let i = 0; i < 6; i += 1) {
      t.clock.advance(20 * MINUTE); // 120 min on the shelf
      expect(t.app.heft.escalations.sweep()).toBe(0);
    }
    t.clock.advance(20 * MINUTE); // back 20 min ago: the rule's delay counts from the return
    expect(t.app.heft.escalations.sweep()).toBe(1);
    await t.app.heft.escalations.deliverDue();
    expect(hook.received.map((r) => JSON.parse(r.body).type)).toEqual(['alert.escalated']);
    expect(t.app.heft.repos.audit.list({ entity: 'alert', limit: 5 }).map((a) => a.action)).toContain('alert.shelve');
  });

  heftTest('when a new act-level signal joins a shelved alert, then it comes off the shelf at once; an acknowledged alert cannot be shelved', async ({ heft: t }) => {
    const { lineId } = await setupLine(t);
    await rule(t, { name: 'supervisor', channel: 'email', to: 'sup@plant.example', severity: 'act', afterMinutes: 0 });
    const alertId = await actAlert(t, lineId);
    t.app.heft.escalations.sweep(); // told once (round 0)
    await t.app.inject({ method: 'POST', url: `/api/alerts/${alertId}/shelve`, headers: { cookie: t.cookies.supervisor }, payload: { minutes: 240, reason: 'known, under repair' } });
    t.clock.advance(30 * MINUTE);
    expect(t.app.heft.escalations.sweep()).toBe(0);
    t.clock.advance(30 * MINUTE);
    await postCheck(t, lineId, weightsWithMean(516)); // beyond the limits again: act
    const now = t.clock.now();
    expect(t.app.heft.repos.alerts.get(alertId)?.shelvedUntil).toBe(now);
    expect(t.app.heft.escalations.sweep()).toBe(1);
    const told = t.app.heft.escalations.notificationsOf(alertId).map((n) => n.eventType);
    expect(told).toEqual(['alert.opened', 'alert.escalated']);
    await t.app.inject({ method: 'POST', url: `/api/alerts/${alertId}/acknowledge`, headers: { cookie: t.cookies.supervisor }, payload: { note: 'on it' } });
    const refused = await t.app.inject({ method: 'POST', url: `/api/alerts/${alertId}/shelve`, headers: { cookie: t.cookies.supervisor }, payload: { minutes: 60, reason: 'x' } });
    expect(refused.statusCode).toBe(409);
  });
});
