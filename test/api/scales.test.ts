import { randomUUID } from 'node:crypto';
import { describe, expect } from 'vitest';
import { countRows, heftTest, postCheck, setupLine, weightsWithMean, type TestApp } from '../helpers.js';

const MINUTE = 60_000;
const packsOf = (weights: number[]) => weights.map((weight) => ({ weight }));
const postPacks = (t: TestApp, lineId: number, packs: unknown, clientId: string = randomUUID(), headers: Record<string, string> = { cookie: t.cookies.operator }) =>
  t.app.inject({ method: 'POST', url: `/api/lines/${lineId}/packs`, headers, payload: { packs, clientId } });

describe('a line’s scale profile', () => {
  heftTest('when no profile is set, then the defaults answer; an admin sets one, audited; a pattern without a weight group is refused by field', async ({ heft: t }) => {
    const { lineId } = await setupLine(t);
    const read = async () => (await t.app.inject({ method: 'GET', url: `/api/lines/${lineId}/scale`, headers: { cookie: t.cookies.operator } })).json().scale;
    expect(await read()).toMatchObject({ connection: 'web-serial', baudRate: 9600, lineEnding: 'crlf', pattern: null, defaultUnit: 'g', sendOnLast: true, configured: false });
    const put = (payload: object, cookie = t.cookies.admin) => t.app.inject({ method: 'PUT', url: `/api/lines/${lineId}/scale`, headers: { cookie }, payload });
    const bad = await put({ connection: 'bridge', pattern: '\\d+\\.\\d g' });
    expect([bad.statusCode, bad.json().issues[0].field, bad.json().issues[0].message]).toEqual([400, 'pattern', 'needs a named group (?<weight>…) for the number']);
    expect((await put({ connection: 'bridge', unstablePattern: '(' })).json().issues[0].field).toBe('unstablePattern');
    expect((await put({ connection: 'bridge', baudRate: 19200 }, t.cookies.supervisor)).statusCode).toBe(403);
    expect(countRows(t.db, 'scale_profiles')).toBe(0);
    const ok = await put({ connection: 'bridge', baudRate: 19200, parity: 'even', dataBits: 7, unstablePattern: '^US', sendOnLast: false });
    expect(ok.statusCode).toBe(200);
    expect(await read()).toMatchObject({ connection: 'bridge', baudRate: 19200, parity: 'even', dataBits: 7, unstablePattern: '^US', sendOnLast: false, configured: true, updatedBy: 'admin' });
    const audit = t.db.prepare("SELECT actor, entity_id AS lineId FROM audit WHERE action = 'scale.update'").all();
    expect(audit).toEqual([{ actor: 'admin', lineId: String(lineId) }]); // the audit keeps entity ids as text
  });

  heftTest('when a sample line is tried, then it reads as the profile would, in the product’s unit too', async ({ heft: t }) => {
    const { lineId } = await setupLine(t, { nominal: 1, unit: 'kg', target: 1.008, sigma: 0.003 });
    const tryLine = async (payload: object) => (await t.app.inject({ method: 'POST', url: `/api/lines/${lineId}/scale/try`, headers: { cookie: t.cookies.operator }, payload })).json().reading;
    expect(await tryLine({ sample: 'ST,GS,+1008,5 g' })).toEqual({ kind: 'weight', value: 1008.5, unit: 'g', inProductUnit: 1.0085 });
    expect(await tryLine({ sample: 'US,GS,+1001,0 g', unstablePattern: '^US' })).toEqual({ kind: 'unstable' });
    expect(await tryLine({ sample: '1.0091', defaultUnit: 'kg' })).toEqual({ kind: 'weight', value: 1.0091, unit: 'kg', inProductUnit: 1.0091 });
    expect(await tryLine({ sample: 'OVERLOAD' })).toEqual({ kind: 'unreadable', reason: 'no weight in the line' });
  });

  heftTest('when a checks token asks which lines it feeds, then it sees only its own, with the product’s packs per check and the profile', async ({ heft: t }) => {
    const one = await setupLine(t, {}, 'L1');
    await setupLine(t, {}, 'L2');
    const { token } = t.app.heft.auth.createToken({ name: 'bridge on L1', kind: 'checks', lineIds: [one.lineId] }, 'test');
    const res = await t.app.inject({ method: 'GET', url: '/api/scale-lines', headers: { authorization: `Bearer ${token}` } });
    expect(res.statusCode).toBe(200);
    expect(res.json().lines).toEqual([
      expect.objectContaining({ id: one.lineId, code: 'L1', product: { code: 'P-L1', unit: 'g', subgroupSize: 5, samplingMinutes: 60, entryBasis: 'net' }, scale: expect.objectContaining({ configured: false }) }),
    ]);
    const all = await t.app.inject({ method: 'GET', url: '/api/scale-lines', headers: { cookie: t.cookies.supervisor } });
    expect(all.json().lines.map((l: { code: string }) => l.code)).toEqual(['L1', 'L2']);
  });
});

describe('where a check’s weights came from', () => {
  heftTest('when checks say they came from the tablet’s scale or a bridge, then the check, its list and the export say so; a checkweigher source is not for this route', async ({ heft: t }) => {
    const { lineId } = await setupLine(t);
    expect((await postCheck(t, lineId, weightsWithMean(503))).json().check.source).toBe('keyed');
    t.clock.advance(MINUTE);
    expect((await postCheck(t, lineId, weightsWithMean(503), { source: 'scale' })).json().check.source).toBe('scale');
    t.clock.advance(MINUTE);
    expect((await postCheck(t, lineId, weightsWithMean(503), { source: 'bridge' })).json().check.source).toBe('bridge');
    const refused = await postCheck(t, lineId, weightsWithMean(503), { source: 'checkweigher' });
    expect([refused.statusCode, refused.json().issues[0].field]).toEqual([400, 'source']);
    const listed = (await t.app.inject({ method: 'GET', url: `/api/lines/${lineId}/checks`, headers: { cookie: t.cookies.operator } })).json().checks;
    expect(listed.map((c: { source: string }) => c.source).sort()).toEqual(['bridge', 'keyed', 'scale']);
    const csv = (await t.app.inject({ method: 'GET', url: '/api/exports/checks.csv?from=2026-01-01T00:00:00Z&to=2027-01-01T00:00:00Z', headers: { cookie: t.cookies.quality } })).body;
    const [header, ...rows] = csv.trim().split('\n');
    const at = (header as string).split(',').indexOf('source');
    expect(at).toBeGreaterThan(0);
    expect(rows.map((r) => r.split(',')[at])).toEqual(['keyed', 'scale', 'bridge']);
  });
});

describe('a checkweigher’s stream of packs', () => {
  heftTest('when 12 packs come for checks of 5, then two checks are formed and judged, two packs wait, and a retried post is taken once', async ({ heft: t }) => {
    const { lineId } = await setupLine(t);
    const weights = [503, 502, 504, 501, 505, 503.5, 502.5, 503, 504.5, 501.5, 502, 503];
    const clientId = randomUUID();
    const first = await postPacks(t, lineId, packsOf(weights), clientId);
    expect(first.statusCode).toBe(201);
    expect(first.json()).toMatchObject({ created: true, waiting: 2 });
    expect(first.json().checks.map((c: { n: number; mean: number }) => [c.n, c.mean])).toEqual([
      [5, 503],
      [5, 503],
    ]);
    const stored = t.db.prepare("SELECT n, source FROM checks ORDER BY id").all();
    expect(stored).toEqual([{ n: 5, source: 'checkweigher' }, { n: 5, source: 'checkweigher' }]);
    const again = await postPacks(t, lineId, packsOf(weights), clientId);
    expect(again.statusCode).toBe(200);
    expect(again.json()).toMatchObject({ created: false, waiting: 2, checks: first.json().checks });
    expect([countRows(t.db, 'checks'), countRows(t.db, 'packs'), countRows(t.db, 'waiting_packs')]).toEqual([2, 10, 2]);
    // the next three complete the third check with the two that waited
    const next = (await postPacks(t, lineId, packsOf([503, 503, 503]))).json();
    expect([next.checks.length, next.checks[0].n, next.waiting]).toEqual([1, 5, 0]);
    expect(t.db.prepare('SELECT net FROM packs WHERE check_id = ? ORDER BY position').all(next.checks[0].id)).toEqual([502, 503, 503, 503, 503].map((net) => ({ net })));
  });

  heftTest('when a partial check waits a sampling interval, then it is judged with the packs it has', async ({ heft: t }) => {
    const { lineId } = await setupLine(t);
    expect((await postPacks(t, lineId, packsOf([503, 504, 502]))).json()).toMatchObject({ checks: [], waiting: 3 });
    t.clock.advance(59 * MINUTE);
    expect(await t.app.heft.checkweigher.flushStale()).toBe(0);
    t.clock.advance(MINUTE);
    expect(await t.app.heft.checkweigher.flushStale()).toBe(1);
    expect(t.db.prepare('SELECT n, mean, source FROM checks').all()).toEqual([{ n: 3, mean: 503, source: 'checkweigher' }]);
    expect(countRows(t.db, 'waiting_packs')).toBe(0);
  });

  heftTest('when a stream runs off target, then its checks open an alert like keyed checks would', async ({ heft: t }) => {
    const { lineId } = await setupLine(t);
    const res = (await postPacks(t, lineId, packsOf(weightsWithMean(515)))).json();
    expect(res.alerts.map((a: { kind: string; direction: string; severity: string }) => [a.kind, a.direction, a.severity])).toEqual([['mean-shift', 'up', 'act']]);
  });

  heftTest('when one pack of a post is bad, then the post is refused naming that pack, and nothing is written', async ({ heft: t }) => {
    const { lineId } = await setupLine(t);
    const future = new Date(t.clock.now() + 60 * MINUTE).toISOString();
    const res = await postPacks(t, lineId, [{ weight: 503 }, { weight: 503, at: future }, ...packsOf([503, 503, 503])]);
    expect([res.statusCode, res.json().issues[0].field]).toEqual([400, 'packs.1.at']);
    const zero = await postPacks(t, lineId, [{ weight: 503 }, { weight: 0 }]);
    expect([zero.statusCode, zero.json().issues[0].field]).toEqual([400, 'packs.1.weight']);
    expect([countRows(t.db, 'checks'), countRows(t.db, 'waiting_packs'), countRows(t.db, 'pack_batches')]).toEqual([0, 0, 0]);
  });

  heftTest('when a checks token posts 10,000 packs in batches, then every pack is stored once, in checks of 5', async ({ heft: t }) => {
    const { lineId } = await setupLine(t);
    const { token } = t.app.heft.auth.createToken({ name: 'checkweigher L1', kind: 'checks', lineIds: [lineId] }, 'test');
    const headers = { authorization: `Bearer ${token}` };
    // a deterministic spread about the target (no random source needed for a count)
    const weights = Array.from({ length: 10_000 }, (_, i) => 503 + ((i * 7) % 11) / 5 - 1);
    let formed = 0;
    for (let start = 0; start < weights.length; start += 500) {
      const res = await postPacks(t, lineId, packsOf(weights.slice(start, start + 500)), randomUUID(), headers);
      expect(res.statusCode).toBe(201);
      formed += res.json().checks.length;
      t.clock.advance(2500);
    }
    expect(formed).toBe(2000);
    expect([countRows(t.db, 'checks'), countRows(t.db, 'packs'), countRows(t.db, 'waiting_packs')]).toEqual([2000, 10_000, 0]);
    const stored = (t.db.prepare('SELECT net FROM packs ORDER BY check_id, position').all() as { net: number }[]).map((p) => p.net);
    expect(stored).toEqual(weights);
  });
});
