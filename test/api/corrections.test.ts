import { randomUUID } from 'node:crypto';
import { afterEach, describe, expect, it } from 'vitest';
import { makeTestApp, postCheck, removeDir, setupLine, weightsWithMean, type TestApp } from '../helpers.js';

const apps: TestApp[] = [];
afterEach(async () => {
  for (const t of apps.splice(0)) {
    await t.close();
    removeDir(t.dir);
  }
});

async function feed(t: TestApp, lineId: number, means: number[]) {
  const out = [];
  for (const m of means) {
    t.clock.advance(3_600_000);
    out.push((await postCheck(t, lineId, weightsWithMean(m))).json());
  }
  return out;
}

const correct = (t: TestApp, checkId: number, body: Record<string, unknown>, cookie = t.cookies.operator) =>
  t.app.inject({ method: 'POST', url: `/api/checks/${checkId}/revisions`, headers: { cookie }, payload: { clientId: randomUUID(), ...body } });

describe('correcting the last check', () => {
  it('when the last check is corrected with a reason, then both revisions are kept and the new one counts', async () => {
    const t = await makeTestApp();
    apps.push(t);
    const { lineId } = await setupLine(t);
    const [, last] = await feed(t, lineId, [503, 503.2]);
    t.clock.advance(5 * 60_000);
    const res = await correct(t, last.check.id, { weights: [503, 502, 504, 503, 502], reason: 'keyed pack 3 twice' });
    expect(res.statusCode).toBe(201);
    const fixed = res.json().check;
    expect(fixed.revision).toBe(2);
    expect(fixed.revisesCheckId).toBe(last.check.id);
    expect(fixed.revisionReason).toBe('keyed pack 3 twice');
    expect(fixed.takenAt).toBe(last.check.takenAt);
    const current = (await t.app.inject({ method: 'GET', url: `/api/lines/${lineId}/checks`, headers: { cookie: t.cookies.operator } })).json().checks;
    expect(current.map((c: { id: number }) => c.id)).not.toContain(last.check.id);
    const all = (await t.app.inject({ method: 'GET', url: `/api/lines/${lineId}/checks?revisions=all`, headers: { cookie: t.cookies.operator } })).json().checks;
    const pair = all.filter((c: { id: number; revisesCheckId: number | null }) => c.id === last.check.id || c.revisesCheckId === last.check.id);
    expect(pair.map((c: { revision: number; supersededBy: number | null }) => [c.revision, c.supersededBy])).toEqual([
      [1, fixed.id],
      [2, null],
    ]);
    const audit = t.app.heft.repos.audit.list({ entity: 'check', limit: 5 });
    expect(audit[0]?.action).toBe('check.correct');
    expect(audit[0]?.actor).toBe('operator');
  });

  it('when a typo is corrected, then the detectors end as if the right values had been keyed in the first place', async () => {
    const typo = await makeTestApp();
    const clean = await makeTestApp();
    apps.push(typo, clean);
    const a = await setupLine(typo);
    const b = await setupLine(clean);
    await feed(typo, a.lineId, [503, 503.4, 502.7]);
    await feed(clean, b.lineId, [503, 503.4, 502.7]);
    typo.clock.advance(3_600_000);
    const wrong = (await postCheck(typo, a.lineId, [503, 530.5, 502, 504, 503], { confirmSuspect: true })).json();
    expect(wrong.signals.length).toBeGreaterThan(0);
    const fixed = await correct(typo, wrong.check.id, { weights: [503, 503.5, 502, 504, 503], reason: '530.5 was 503.5' });
    expect(fixed.statusCode).toBe(201);
    clean.clock.advance(3_600_000);
    await postCheck(clean, b.lineId, [503, 503.5, 502, 504, 503]);
    expect(typo.app.heft.monitor.lineState(a.lineId).segment).toEqual(clean.app.heft.monitor.lineState(b.lineId).segment);
    // and after a restart too
    const again = await typo.restart();
    apps[0] = again;
    expect(again.app.heft.monitor.lineState(a.lineId).segment).toEqual(clean.app.heft.monitor.lineState(b.lineId).segment);
  });

  it('when an older check, a corrected one, a late one or one without a reason is corrected, then it is refused', async () => {
    const t = await makeTestApp();
    apps.push(t);
    const { lineId } = await setupLine(t);
    const [first, second] = await feed(t, lineId, [503, 503.2]);
    expect((await correct(t, first.check.id, { weights: [503], reason: 'x' })).statusCode).toBe(409);
    const noReason = await correct(t, second.check.id, { weights: [503] });
    expect(noReason.statusCode).toBe(400);
    expect(noReason.json().issues[0].field).toBe('reason');
    const ok = await correct(t, second.check.id, { weights: [503, 503], reason: 'one pack short' });
    expect(ok.statusCode).toBe(201);
    const twice = await correct(t, second.check.id, { weights: [503], reason: 'again' });
    expect(twice.statusCode).toBe(409);
    expect(twice.json().message).toMatch(/already corrected/);
    t.clock.advance(13 * 3_600_000);
    const late = await correct(t, ok.json().check.id, { weights: [503], reason: 'late' });
    expect(late.statusCode).toBe(409);
    expect(late.json().message).toMatch(/more than 12 hours/);
  });
});
