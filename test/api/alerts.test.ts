import { describe, expect, it } from 'vitest';
import { mean } from 'simple-statistics';
import { closeAfterEach, countRows, makeTestApp, postCheck, rulesOf, setupLine, weightsWithMean, type TestApp } from '../helpers.js';

let t: TestApp | null = null;
closeAfterEach(
  () => t,
  () => {
    t = null;
  },
);

const HOUR = 3_600_000;

async function series(app: TestApp, lineId: number, means: number[], stepMs = HOUR) {
  const answers = [];
  for (const m of means) {
    app.clock.advance(stepMs);
    const res = await postCheck(app, lineId, weightsWithMean(m));
    expect(res.statusCode).toBe(201);
    answers.push(res.json());
  }
  return answers;
}

// centre 503, σ 2, n 5 → σ of the mean 0.894 g; these in-control means stay within ±0.5σ of the mean
const CALM = [503.2, 502.7, 503.3, 502.8, 503.1, 502.9, 503.2, 502.8, 503.1, 502.9];

describe('one shift, one alert', () => {
  it('when the mean steps up by 1.5σ, then several rules fire but exactly one mean-shift alert opens, listing them all', async () => {
    t = await makeTestApp();
    const { lineId } = await setupLine(t);
    await series(t, lineId, CALM);
    const shifted = await series(t, lineId, [506, 505.8, 506.1, 505.9, 506.2]);
    const alerts = t.app.heft.repos.alerts.list({ limit: 100 });
    expect(alerts).toHaveLength(1);
    const [alert] = alerts;
    expect(alert?.kind).toBe('mean-shift');
    expect(alert?.direction).toBe('up');
    expect(alert?.severity).toBe('act');
    expect(alert?.rules.length).toBeGreaterThanOrEqual(4);
    expect(alert?.rules).toEqual(expect.arrayContaining(['beyond-3-sigma', 'two-of-three-beyond-2-sigma', 'four-of-five-beyond-1-sigma', 'cusum-shift']));
    // the first shifted check is where it began, by the change-point estimate
    const firstShiftedId = shifted[0].check.id;
    expect(alert?.changePointCheckId).toBe(firstShiftedId);
    expect(alert?.size?.unit).toBeCloseTo(3, 0);
    expect(alert?.size?.sigma).toBeCloseTo(1.5, 0);
    // every signal the shifted checks raised points at the one alert, and the alert counts them all
    const raised = shifted.flatMap((a) => t!.app.heft.repos.alerts.signalsOfCheck(a.check.id));
    expect(raised.length).toBeGreaterThanOrEqual(4);
    expect(new Set(raised.map((s) => s.alertId))).toEqual(new Set([alert!.id]));
    expect(alert?.signalCount).toBe(raised.length);
    // the live feed said opened once, then updated
    const kinds = t.events.filter((e) => e.type === 'alert-opened' || e.type === 'alert-updated').map((e) => e.type);
    expect(kinds[0]).toBe('alert-opened');
    expect(kinds.filter((k) => k === 'alert-opened')).toHaveLength(1);
  });

  it('when a later shift goes down, then a second alert opens for it', async () => {
    t = await makeTestApp();
    const { lineId } = await setupLine(t);
    await series(t, lineId, [...CALM, 506, 506.1, 505.9]);
    const up = t.app.heft.repos.alerts.list({ limit: 10 })[0]!;
    const sup = { cookie: t.cookies.supervisor };
    await t.app.inject({ method: 'POST', url: `/api/alerts/${up.id}/acknowledge`, headers: sup, payload: { note: 'looking' } });
    await t.app.inject({ method: 'POST', url: `/api/alerts/${up.id}/resolve`, headers: sup, payload: { cause: 'auger', action: 'reset' } });
    await series(t, lineId, [...CALM.slice(0, 4), 500, 499.9, 500.1]);
    const all = t.app.heft.repos.alerts.list({ limit: 10 });
    expect(all).toHaveLength(2);
    expect(all[1]?.direction).toBe('down');
    expect(all[1]?.state).toBe('open');
  });
});

describe('alert lifecycle', () => {
  it('when an alert is acknowledged and resolved, then each step is stored, audited, and wrong steps answer 409', async () => {
    t = await makeTestApp();
    const { lineId } = await setupLine(t);
    await series(t, lineId, [503, 509]);
    const alert = t.app.heft.repos.alerts.list({ limit: 10 })[0]!;
    const sup = { cookie: t.cookies.supervisor };
    const url = (a: string) => `/api/alerts/${alert.id}/${a}`;
    const bad = await t.app.inject({ method: 'POST', url: url('acknowledge'), headers: sup, payload: { note: '' } });
    expect(bad.statusCode).toBe(400);
    expect(bad.json().issues[0].field).toBe('note');
    const ack = await t.app.inject({ method: 'POST', url: url('acknowledge'), headers: sup, payload: { note: 'on my way' } });
    expect(ack.statusCode).toBe(200);
    expect(ack.json().alert.state).toBe('acknowledged');
    expect(ack.json().alert.acknowledged).toMatchObject({ by: 'supervisor', note: 'on my way' });
    expect((await t.app.inject({ method: 'POST', url: url('acknowledge'), headers: sup, payload: { note: 'again' } })).statusCode).toBe(409);
    const res = await t.app.inject({ method: 'POST', url: url('resolve'), headers: sup, payload: { cause: 'head 3 blocked', action: 'cleared' } });
    expect(res.statusCode).toBe(200);
    expect(res.json().alert.resolved).toMatchObject({ by: 'supervisor', cause: 'head 3 blocked', action: 'cleared' });
    expect((await t.app.inject({ method: 'POST', url: url('resolve'), headers: sup, payload: { cause: 'x', action: 'y' } })).statusCode).toBe(409);
    expect((await t.app.inject({ method: 'POST', url: url('acknowledge'), headers: sup, payload: { note: 'late' } })).statusCode).toBe(409);
    expect((await t.app.inject({ method: 'POST', url: '/api/alerts/9999/acknowledge', headers: sup, payload: { note: 'x' } })).statusCode).toBe(404);
    const audit = t.app.heft.repos.audit.list({ entity: 'alert', limit: 10 });
    expect(audit.map((a) => a.action)).toEqual(['alert.resolve', 'alert.acknowledge']);
  });

  it('when an open alert is resolved straight away, then that is allowed (open → resolved)', async () => {
    t = await makeTestApp();
    const { lineId } = await setupLine(t);
    await series(t, lineId, [503, 509]);
    const alert = t.app.heft.repos.alerts.list({ limit: 10 })[0]!;
    const res = await t.app.inject({ method: 'POST', url: `/api/alerts/${alert.id}/resolve`, headers: { cookie: t.cookies.quality }, payload: { cause: 'typo', action: 'none' } });
    expect(res.statusCode).toBe(200);
  });
});

describe('check overdue', () => {
  it('when the sampling interval plus grace passes with no check, then "check overdue" opens, and the next check resolves it', async () => {
    t = await makeTestApp();
    const { lineId } = await setupLine(t);
    await series(t, lineId, [503]);
    t.clock.advance(60 * 60_000 + 9 * 60_000);
    expect(t.app.heft.monitor.sweepOverdue()).toHaveLength(0);
    t.clock.advance(2 * 60_000);
    const opened = t.app.heft.monitor.sweepOverdue();
    expect(opened).toHaveLength(1);
    expect(opened[0]?.kind).toBe('check-overdue');
    expect(t.app.heft.monitor.sweepOverdue()).toHaveLength(0); // one alert, not one per sweep
    const status = (await t.app.inject({ method: 'GET', url: `/api/lines/${lineId}/status`, headers: { cookie: t.cookies.operator } })).json().status;
    expect(status.overdue).toBe(true);
    const res = await postCheck(t, lineId, weightsWithMean(503));
    expect(res.json().alerts.map((a: { kind: string; state: string }) => [a.kind, a.state])).toEqual([['check-overdue', 'resolved']]);
    expect(t.app.heft.repos.alerts.get(opened[0]!.id)?.state).toBe('resolved');
  });

  it('when the clock jumps backwards, then nothing turns overdue and checks are still taken', async () => {
    t = await makeTestApp();
    const { lineId } = await setupLine(t);
    await series(t, lineId, [503, 503.1]);
    t.clock.advance(-30 * 60_000);
    expect(t.app.heft.monitor.sweepOverdue()).toHaveLength(0);
    expect((await postCheck(t, lineId, weightsWithMean(503))).statusCode).toBe(201);
    t.clock.advance(-5 * HOUR);
    const before = await postCheck(t, lineId, weightsWithMean(503));
    expect(before.statusCode).toBe(400); // before the run began: refused with a reason, not misfiled
    expect(before.json().issues[0].field).toBe('takenAt');
  });
});

describe('net quantity and spread', () => {
  it('when a pack is below T2, then a pack-below-t2 alert opens at act level', async () => {
    t = await makeTestApp();
    const { lineId } = await setupLine(t);
    t.clock.advance(HOUR);
    const res = await postCheck(t, lineId, [503, 469, 504, 503, 502]);
    const body = res.json();
    expect(body.check.belowT2).toBe(1);
    expect(body.check.belowT1).toBe(1);
    const kinds = body.alerts.map((a: { kind: string }) => a.kind);
    expect(kinds).toContain('pack-below-t2');
    const t2 = body.alerts.find((a: { kind: string }) => a.kind === 'pack-below-t2');
    expect(t2.severity).toBe('act');
    expect(t2.size.unit).toBeCloseTo(469 - 470, 10);
  });

  it('when the spread jumps above the R chart limit, then spread-up opens', async () => {
    t = await makeTestApp();
    const { lineId } = await setupLine(t);
    t.clock.advance(HOUR);
    // R UCL for n = 5 and σ = 2 is D2-based: (2.326 + 3·0.864)·2 = 9.84 g
    const res = await postCheck(t, lineId, [497, 503, 503, 503, 509]);
    expect(res.json().alerts.map((a: { kind: string }) => a.kind)).toEqual(['spread-up']);
  });
});

describe('limits versions', () => {
  it('when too few checks form the baseline, then 422; with 20 or more, a proposal, then approval versions the limits', async () => {
    t = await makeTestApp();
    const { lineId } = await setupLine(t);
    const start = new Date(t.clock.now()).toISOString();
    const q = { cookie: t.cookies.quality };
    await series(t, lineId, CALM);
    const few = await t.app.inject({ method: 'POST', url: `/api/lines/${lineId}/limits/proposal`, headers: q, payload: { from: start, to: new Date(t.clock.now() + 1).toISOString() } });
    expect(few.statusCode).toBe(422);
    expect(few.json().message).toMatch(/at least 20/);
    await series(t, lineId, [...CALM, 503, 503.3]);
    const to = new Date(t.clock.now() + 1).toISOString();
    const proposal = await t.app.inject({ method: 'POST', url: `/api/lines/${lineId}/limits/proposal`, headers: q, payload: { from: start, to } });
    expect(proposal.statusCode).toBe(200);
    const p = proposal.json().proposal;
    expect(p.checks).toBe(22);
    expect(p.method).toBe('rbar');
    expect(p.centre).toBeCloseTo(503, 0);
    const op = await t.app.inject({ method: 'POST', url: `/api/lines/${lineId}/limits`, headers: { cookie: t.cookies.operator }, payload: { basis: 'baseline', from: start, to } });
    expect(op.statusCode).toBe(403);
    const approved = await t.app.inject({ method: 'POST', url: `/api/lines/${lineId}/limits`, headers: q, payload: { basis: 'baseline', from: start, to, note: 'first baseline' } });
    expect(approved.statusCode).toBe(201);
    const version = approved.json().limits;
    expect(version.sigma).toBeCloseTo(p.sigma, 12);
    const status = (await t.app.inject({ method: 'GET', url: `/api/lines/${lineId}/status`, headers: q })).json().status;
    expect(status.limits.source).toBe('approved');
    expect(status.detectors.points).toBe(0); // a new limits version starts a fresh segment
    const [next] = await series(t, lineId, [503]);
    expect(next.check.limitsVersionId).toBe(version.id);
  });

  it('when a baseline point breaks the proposed limits, then the proposal lists it', async () => {
    t = await makeTestApp();
    const { lineId } = await setupLine(t);
    const start = new Date(t.clock.now()).toISOString();
    await series(t, lineId, [...CALM, ...CALM, 503.05, 503]);
    await t.app.inject({ method: 'POST', url: `/api/lines/${lineId}/checks`, headers: { cookie: t.cookies.operator }, payload: { weights: weightsWithMean(520), clientId: crypto.randomUUID(), confirmSuspect: true } });
    const res = await t.app.inject({ method: 'POST', url: `/api/lines/${lineId}/limits/proposal`, headers: { cookie: t.cookies.quality }, payload: { from: start, to: new Date(t.clock.now() + 1).toISOString() } });
    const { breaking } = res.json().proposal;
    expect(breaking).toHaveLength(1);
    expect(breaking[0].reasons).toContain('mean above the upper limit');
    expect(countRows(t.db, 'limit_versions')).toBe(0);
  });

  it('when the breaking point is left out with a reason, then the proposal is made without it, a bad exclusion is named, and the approved version keeps the reason', async () => {
    const app = await makeTestApp();
    t = app;
    const { lineId } = await setupLine(t);
    const q = { cookie: app.cookies.quality };
    const from = new Date(app.clock.now()).toISOString();
    const calm = await series(app, lineId, [...CALM, ...CALM, 503.05, 503]);
    const odd = await app.app.inject({ method: 'POST', url: `/api/lines/${lineId}/checks`, headers: { cookie: app.cookies.operator }, payload: { weights: weightsWithMean(520), clientId: crypto.randomUUID(), confirmSuspect: true } });
    const oddId = odd.json().check.id as number;
    const to = new Date(app.clock.now() + 1).toISOString();
    const propose = (exclude: unknown) => app.app.inject({ method: 'POST', url: `/api/lines/${lineId}/limits/proposal`, headers: q, payload: { from, to, exclude } });
    const without = (await propose([{ checkId: oddId, reason: 'scale knocked' }])).json().proposal;
    expect([without.checks, without.breaking.length]).toEqual([calm.length, 0]);
    // the centre is the mean of the means kept (simple-statistics, an independent library)
    expect(without.centre).toBeCloseTo(mean(calm.map((a) => a.check.mean)), 10);
    expect(without.points.find((p: { checkId: number }) => p.checkId === oddId).excludedReason).toBe('scale knocked');
    const notInBaseline = await propose([{ checkId: oddId + 1000, reason: 'x' }]);
    expect([notInBaseline.statusCode, notInBaseline.json().issues[0].field]).toEqual([400, 'exclude.0.checkId']);
    const noReason = await propose([{ checkId: oddId, reason: '  ' }]);
    expect([noReason.statusCode, noReason.json().issues[0].field]).toEqual([400, 'exclude.0.reason']);
    const badApproval = await app.app.inject({ method: 'POST', url: `/api/lines/${lineId}/limits`, headers: q, payload: { basis: 'baseline', from, to, exclude: [{ checkId: oddId, reason: 'a' }, { checkId: oddId, reason: 'b' }] } });
    expect([badApproval.statusCode, badApproval.json().issues[0].field, countRows(app.db, 'limit_versions')]).toEqual([400, 'exclude.1.checkId', 0]);
    const approved = await app.app.inject({ method: 'POST', url: `/api/lines/${lineId}/limits`, headers: q, payload: { basis: 'baseline', from, to, exclude: [{ checkId: oddId, reason: 'scale knocked' }] } });
    expect(approved.statusCode).toBe(201);
    expect([approved.json().limits.baselineChecks, approved.json().limits.excluded, approved.json().limits.centre]).toEqual([calm.length, [{ checkId: oddId, reason: 'scale knocked' }], without.centre]);
  });
});

describe('variable n', () => {
  it('when a check has fewer packs, then its limits widen as 3σ/√nᵢ', async () => {
    t = await makeTestApp();
    const { lineId } = await setupLine(t);
    t.clock.advance(HOUR);
    // mean 506.5: beyond 3σ/√5 = 2.68 g, within 3σ/√2 = 4.24 g
    const two = await postCheck(t, lineId, [506, 507]);
    expect(rulesOf(two.json())).not.toContain('beyond-3-sigma');
    t.clock.advance(HOUR);
    const five = await postCheck(t, lineId, weightsWithMean(506.5));
    expect(rulesOf(five.json())).toContain('beyond-3-sigma');
  });
});
