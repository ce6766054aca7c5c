import type { FastifyInstance } from 'fastify';
import { buildApp } from '../server/app.js';
import { ManualClock } from '../server/clock.js';
import type { Config } from '../server/config.js';
import type { Db } from '../server/db/database.js';
import type { AlertSummary } from '../server/alerts/contract.js';
import { mulberry32, normalGenerator } from '../server/stats/random.js';
import { shiftAt } from '../server/calendar/schedule.js';
import { localParts } from '../server/shared/time-zone.js';
import { CALENDAR, DEMO_SEED, DEMO_USERS, HISTORY_DAYS, INCIDENTS, LINES, PEOPLE, PRODUCTS, type DemoProduct } from './scenario.js';

const HOUR = 3_600_000;

/** A version-4-shaped UUID from a seeded source, so the same seed gives the same client ids. */
export function seededUuid(uniform: () => number): string {
  const hex = Array.from({ length: 32 }, () => Math.floor(uniform() * 16).toString(16));
  hex[12] = '4';
  hex[16] = ((parseInt(hex[16] as string, 16) & 0x3) | 0x8).toString(16);
  const s = hex.join('');
  return `${s.slice(0, 8)}-${s.slice(8, 12)}-${s.slice(12, 16)}-${s.slice(16, 20)}-${s.slice(20)}`;
}

/** Rounds to what the demo's bench scales show: 0.1 g, or 1 g for products weighed in kg. */
export function toScale(value: number, unit: 'g' | 'kg'): number {
  return unit === 'kg' ? Math.round(value * 1000) / 1000 : Math.round(value * 10) / 10;
}

interface PendingAction {
  at: number;
  alertId: number;
  /** 'fix' is the line's own repair: the incident's effect on the process ends then. */
  kind: 'acknowledge' | 'resolve' | 'fix' | 'shelve' | 'start-line';
  who: string;
  /** For 'start-line': the line stopped for cleaning. */
  lineId?: number;
  minutes?: number;
  incident?: string;
  note?: string;
  cause?: string;
  action?: string;
}

export interface GenerateOptions {
  db: Db;
  config: Config;
  /** The history ends here (epoch ms); it starts HISTORY_DAYS before. */
  endAt: number;
  seed?: number;
}

export interface GenerateSummary {
  checks: number;
  alerts: number;
  startAt: number;
  endAt: number;
}

async function signIn(app: FastifyInstance, username: string, secret: string): Promise<string> {
  const res = await app.inject({ method: 'POST', url: '/api/session', payload: { username, secret } });
  if (res.statusCode !== 200) throw new Error(`demo sign-in as ${username} failed: ${res.body}`);
  return String(res.headers['set-cookie']).split(';')[0] as string;
}

async function call(app: FastifyInstance, cookie: string, method: 'POST' | 'PUT', url: string, payload: unknown) {
  const res = await app.inject({ method, url, payload: payload as object, headers: { cookie } });
  if (res.statusCode >= 300) throw new Error(`demo ${method} ${url} failed: ${res.statusCode} ${res.body}`);
  return res.json() as Record<string, { id: number }>;
}

/**
 * Writes the demo plant and two weeks of hourly checks into a migrated, empty database, through
 * the same services the API uses, with a hand-moved clock. The same seed gives the same data.
 */
export async function generateDemo(options: GenerateOptions): Promise<GenerateSummary> {
  const endAt = Math.floor(options.endAt / HOUR) * HOUR;
  const startAt = endAt - HISTORY_DAYS * 24 * HOUR;
  const clock = new ManualClock(startAt - HOUR);
  const uniform = mulberry32(options.seed ?? DEMO_SEED);
  const normal = normalGenerator(uniform);
  const app = await buildApp({ db: options.db, clock, config: options.config });
  const { monitor, auth } = app.heft;

  for (const u of DEMO_USERS) await auth.addUser(u, 'demo-setup');
  for (const name of [...PEOPLE.operators, ...PEOPLE.supervisors]) {
    const role = PEOPLE.operators.includes(name) ? 'operator' : 'supervisor';
    const pin = String(100000 + Math.floor(uniform() * 900000));
    const displayName = name.split('.').map((p) => p[0]?.toUpperCase() + p.slice(1)).join(' ');
    await auth.addUser({ username: name, displayName, role, secret: pin }, 'demo-setup');
  }

  const admin = await signIn(app, 'admin', 'admin-demo-4444');
  const productIds = new Map<string, number>();
  const productByCode = new Map<string, DemoProduct>(PRODUCTS.map((p) => [p.code, p]));
  for (const p of PRODUCTS) {
    const body = await call(app, admin, 'POST', '/api/products', p);
    productIds.set(p.code, (body.product as { id: number }).id);
  }
  const lineIds = new Map<string, number>();
  for (const l of LINES) {
    const body = await call(app, admin, 'POST', '/api/lines', { code: l.code, name: l.name, packsPerHour: l.packsPerHour, continuous: l.continuous });
    lineIds.set(l.code, (body.line as { id: number }).id);
  }
  await call(app, admin, 'PUT', '/api/calendar', CALENDAR);
  const calendar = { shifts: CALENDAR.shifts, closedDays: CALENDAR.closedDays.map((d) => d.date) };
  const timeZone = options.config.timeZone;
  const inShift = (at: number) => shiftAt(calendar, at, timeZone) !== null;
  // the rice line's changeover falls on a working day's late shift, whatever weekday the history starts on
  const spreadSpec = INCIDENTS.spreadAfterChangeover;
  let spreadAtHour = spreadSpec.fromDay * 24;
  while (!(inShift(startAt + spreadAtHour * HOUR) && localParts(startAt + spreadAtHour * HOUR, timeZone).hour === spreadSpec.localHour)) spreadAtHour += 1;
  clock.set(startAt - 30 * 60_000);
  for (const l of LINES) monitor.changeover(lineIds.get(l.code) as number, productIds.get(l.product) as number, 'pat.quillan');

  const running = new Map<string, string>(LINES.map((l) => [l.code, l.product]));
  const fixedAt = new Map<string, number>();
  const detectedAt = new Map<string, number>();
  const pending: PendingAction[] = [];
  let checks = 0;
  const alertsSeen = new Set<number>();
  let shelvedOne = false;

  const incidentOf = (lineCode: string, hour: number): keyof typeof INCIDENTS | null => {
    const { stepShift, drift, spreadAfterChangeover, packBelowT2 } = INCIDENTS;
    if (lineCode === stepShift.line && hour >= stepShift.fromHour && !fixedAt.has('stepShift')) return 'stepShift';
    if (lineCode === drift.line && hour >= drift.fromHour && !fixedAt.has('drift')) return 'drift';
    if (lineCode === spreadAfterChangeover.line && hour >= spreadAtHour && !fixedAt.has('spreadAfterChangeover')) return 'spreadAfterChangeover';
    if (lineCode === packBelowT2.line && hour === packBelowT2.hour) return 'packBelowT2';
    return null;
  };

  const supervisorFor = (at: number) => PEOPLE.supervisors[Math.floor(((at - startAt) / HOUR / 12) % 2)] as string;

  const react = (alert: AlertSummary, at: number, hour: number, lineCode: string) => {
    if (alertsSeen.has(alert.id) || alert.kind === 'check-overdue') return;
    alertsSeen.add(alert.id);
    const who = supervisorFor(at);
    const incident = incidentOf(lineCode, hour);
    const ackAt = at + (10 + Math.floor(uniform() * 30)) * 60_000;
    if (ackAt > endAt - 2 * HOUR) return; // the latest alerts stay open for the board
    // once, a supervisor shelves a watch-level alert of no incident for two hours, with the reason, before seeing to it
    if (!shelvedOne && incident === null && alert.severity === 'watch' && ackAt + 3 * HOUR < endAt - 2 * HOUR) {
      shelvedOne = true;
      pending.push({ at: at + 5 * 60_000, alertId: alert.id, kind: 'shelve', who, minutes: 120, note: 'known: film reel being changed on this line; looking after it' });
      pending.push({ at: at + 130 * 60_000, alertId: alert.id, kind: 'acknowledge', who, note: 'back from the shelf; looking now' });
      pending.push({ at: at + 190 * 60_000, alertId: alert.id, kind: 'resolve', who, cause: 'no assignable cause found', action: 'none; watched the next checks' });
      return;
    }
    pending.push({ at: ackAt, alertId: alert.id, kind: 'acknowledge', who, note: 'seen; going to the line to look' });
    if (incident === 'stepShift' || incident === 'drift' || incident === 'spreadAfterChangeover') {
      const spec = INCIDENTS[incident];
      if (!detectedAt.has(incident)) detectedAt.set(incident, at);
      const fix = Math.max(at + (incident === 'drift' ? 1 : 2) * HOUR, 'toHour' in spec ? startAt + spec.toHour * HOUR : 0);
      pending.push({ at: fix, alertId: alert.id, kind: 'resolve', who, cause: spec.cause, action: spec.action });
      pending.push({ at: fix, alertId: alert.id, kind: 'fix', who, incident });
    } else if (incident === 'packBelowT2') {
      // one half-empty bag also drags the check's mean and range: every alert it opened has the same cause
      pending.push({ at: ackAt + 20 * 60_000, alertId: alert.id, kind: 'resolve', who, cause: INCIDENTS.packBelowT2.cause, action: INCIDENTS.packBelowT2.action });
    } else {
      pending.push({ at: ackAt + HOUR, alertId: alert.id, kind: 'resolve', who, cause: 'no assignable cause found', action: 'none; watched the next checks' });
    }
  };

  const runPending = (until: number) => {
    pending.sort((a, b) => a.at - b.at);
    while (pending.length > 0 && (pending[0] as PendingAction).at <= until) {
      const p = pending.shift() as PendingAction;
      clock.set(Math.max(clock.now(), p.at));
      if (p.kind === 'fix') {
        fixedAt.set(p.incident as string, p.at);
        continue;
      }
      if (p.kind === 'start-line') {
        monitor.startLine(p.lineId as number, p.who);
        continue;
      }
      const alert = app.heft.repos.alerts.get(p.alertId);
      if (!alert || alert.state === 'resolved') continue;
      if (p.kind === 'shelve' && alert.state === 'open') monitor.shelve(p.alertId, p.minutes as number, p.note as string, p.who);
      if (p.kind === 'acknowledge' && alert.state === 'open') monitor.acknowledge(p.alertId, p.note as string, p.who);
      if (p.kind === 'resolve') monitor.resolve(p.alertId, p.cause as string, p.action as string, p.who);
    }
  };

  const hours = HISTORY_DAYS * 24;
  for (let hour = 0; hour < hours; hour += 1) {
    // the calendar stops the rice line at the end of the late shift and starts it with the early one
    runPending(startAt + hour * HOUR);
    clock.set(Math.max(clock.now(), startAt + hour * HOUR));
    app.heft.calendar.sweep();
    for (const [index, l] of LINES.entries()) {
      const at = startAt + hour * HOUR + (5 + index * 15 + Math.floor(uniform() * 6)) * 60_000;
      runPending(at);
      clock.set(at);
      monitor.sweepOverdue();
      const lineId = lineIds.get(l.code) as number;
      const spread = INCIDENTS.spreadAfterChangeover;
      if (l.code === spread.line && hour === spreadAtHour && running.get(l.code) !== spread.product) {
        monitor.changeover(lineId, productIds.get(spread.product) as number, supervisorFor(at));
        running.set(l.code, spread.product);
        // the line is cleaned after the changeover: stopped for 40 minutes, so this hour's check is not taken
        monitor.stopLine(lineId, 'cleaning', 'after the changeover to brown rice', supervisorFor(at));
        pending.push({ at: at + 40 * 60_000, alertId: 0, kind: 'start-line', who: supervisorFor(at), lineId });
        continue;
      }
      if (l.code === INCIDENTS.missedCheck.line && INCIDENTS.missedCheck.hours.includes(hour)) continue;
      if (monitor.lineState(lineId).stop) continue; // nothing is made, so nothing is weighed
      if (hour === 48 && l.code === 'L1') {
        const quality = await signIn(app, 'quality', 'quality-demo-3333');
        await call(app, quality, 'POST', `/api/lines/${lineId}/limits`, {
          basis: 'baseline',
          from: new Date(startAt).toISOString(),
          to: new Date(at - 1).toISOString(),
          note: 'first two days of the oats line as baseline',
        });
      }
      const product = productByCode.get(running.get(l.code) as string) as DemoProduct;
      const incident = incidentOf(l.code, hour);
      let offsetSigma = 0;
      let spreadFactor = 1;
      if (incident === 'stepShift') offsetSigma = INCIDENTS.stepShift.shiftSigma;
      if (incident === 'drift') offsetSigma = INCIDENTS.drift.perHourSigma * (hour - INCIDENTS.drift.fromHour);
      if (incident === 'spreadAfterChangeover') spreadFactor = INCIDENTS.spreadAfterChangeover.spreadFactor;
      const nets = Array.from({ length: product.subgroupSize }, () =>
        product.target + product.sigma * (offsetSigma + spreadFactor * normal()),
      );
      if (incident === 'packBelowT2') {
        const t2 = (app.heft.repos.products.getByCode(product.code)?.t2 ?? product.nominal * 0.9) as number;
        nets[2] = t2 - (product.unit === 'kg' ? 0.004 : 1.2);
      }
      const keyed = nets.map((w) => toScale(product.entryBasis === 'gross' ? w + product.tare : w, product.unit));
      const operator = PEOPLE.operators[Math.floor(hour / 8) % PEOPLE.operators.length] as string;
      const result = monitor.recordCheck(
        lineId,
        { weights: keyed, clientId: seededUuid(uniform), basis: product.entryBasis, confirmSuspect: true },
        operator,
      );
      checks += 1;
      for (const alert of result.alerts) react(alert, at, hour, l.code);
    }
  }
  runPending(endAt);
  // one escalation rule to a webhook nobody listens on, in force from the start of the history, so the
  // alerts still open at the end are told at once when the demo starts and their retries show
  clock.set(startAt);
  app.heft.escalations.createRule(
    { name: 'night supervisor (demo webhook, nothing listens)', channel: 'webhook', target: 'http://127.0.0.1:9/heft-demo', severity: 'watch', afterMinutes: 0, lineIds: null },
    'quality',
  );
  clock.set(endAt);
  await app.close();
  return { checks, alerts: alertsSeen.size, startAt, endAt };
}
