/** The pages' client for Heft's JSON API: the same routes the integrators use. */

export class ApiError extends Error {
  constructor(
    readonly status: number,
    readonly body: { error?: string; message?: string; issues?: { field: string; message: string }[] } | null,
  ) {
    super(body?.message ?? `HTTP ${status}`);
  }
}

/** A request that never reached the server (offline, server down): the caller may retry. */
export class NetworkError extends Error {}

export async function api<T>(method: string, path: string, body?: unknown): Promise<T> {
  let res: Response;
  try {
    res = await fetch(path, {
      method,
      headers: body === undefined ? {} : { 'content-type': 'application/json' },
      body: body === undefined ? undefined : JSON.stringify(body),
      credentials: 'same-origin',
    });
  } catch (err) {
    throw new NetworkError(err instanceof Error ? err.message : String(err));
  }
  const text = await res.text();
  const parsed = text ? (JSON.parse(text) as unknown) : null;
  if (!res.ok) throw new ApiError(res.status, parsed as ApiError['body']);
  return parsed as T;
}

export interface Plant {
  name: string;
  timeZone: string;
}

export interface User {
  username: string;
  displayName: string;
  role: 'operator' | 'supervisor' | 'quality' | 'admin';
}

export interface Product {
  id: number;
  code: string;
  name: string;
  nominal: number;
  unit: 'g' | 'kg';
  target: number;
  subgroupSize: number;
  samplingMinutes: number;
  tare: number;
  sigma: number | null;
  entryBasis: 'net' | 'gross';
  tne: number | null;
  t1: number | null;
  t2: number | null;
}

export interface Line {
  id: number;
  code: string;
  name: string;
  product: Product | null;
  runStartedAt: string | null;
  status: 'steady' | 'watch' | 'act' | 'idle';
}

export interface Signal {
  rule: string;
  words: string;
  severity: 'act' | 'watch';
  checkId: number | null;
  at: string;
  direction: 'up' | 'down' | null;
  size: { unit: number; sigma: number | null } | null;
}

/** A check's signals for one alert, as the check's answer gives them (the check and its time are the answer's own). */
export interface CheckSignal {
  alertId: number;
  direction: 'up' | 'down' | null;
  size: { unit: number; sigma: number | null } | null;
  rules: { rule: string; severity: 'act' | 'watch'; onsetCheckId: number | null }[];
}

export interface Alert {
  id: number;
  lineId: number;
  kind: 'mean-shift' | 'spread-up' | 'pack-below-t2' | 'check-overdue';
  direction: 'up' | 'down' | null;
  severity: 'act' | 'watch';
  state: 'open' | 'acknowledged' | 'resolved';
  rules: string[];
  ruleWords: string[];
  signals: Signal[];
  signalCount: number;
  openedAt: string;
  updatedAt: string;
  onset: { at: string | null; checkId: number | null };
  changePoint: { at: string | null; checkId: number } | null;
  size: { unit: number; sigma: number | null } | null;
  acknowledged: { by: string; at: string; note: string } | null;
  resolved: { by: string; at: string; cause: string; action: string } | null;
}

/** What a check's answer and its live message say of an alert: no signals and no notes (the full alert is on GET /api/alerts/:id). */
export type AlertSummary = Omit<Alert, 'signals' | 'acknowledged' | 'resolved'> & { signalCount: number };

export interface Check {
  id: number;
  lineId: number;
  takenAt: string;
  weights: number[];
  n: number;
  mean: number;
  sd: number | null;
  range: number;
  se: number | null;
  t: number | null;
  p: number | null;
  target: number;
  belowT1: number;
  belowT2: number;
  revision: number;
  revisesCheckId: number | null;
}

/** The server's own chart-limit shapes, shared by type only (erased from the bundle). */
export type { MeanChartLimits as ChartLimits, SpreadChartLimits } from '../../server/stats/control-limits.js';
import type { MeanChartLimits, SpreadChartLimits } from '../../server/stats/control-limits.js';

export interface Status {
  line: { id: number; code: string; name: string };
  state: 'steady' | 'watch' | 'act' | 'idle';
  product: Product | null;
  limits: { source: string; centre: number; sigma: number; meanChart: MeanChartLimits; spreadChart: SpreadChartLimits } | null;
  openAlerts: Alert[];
  lastCheckAt: string | null;
  nextCheckDue: string | null;
  overdue: boolean;
  falseAlarm: { words: string } | null;
  now: string;
}

export const getPlant = () => api<{ plant: Plant }>('GET', '/api/plant').then((r) => r.plant);

/** The signed-in person, or null. */
export async function whoAmI(): Promise<User | null> {
  try {
    return (await api<{ user: User }>('GET', '/api/session')).user;
  } catch (err) {
    if (err instanceof ApiError && (err.status === 401 || err.status === 403)) return null;
    throw err;
  }
}

export const signIn = (username: string, secret: string) => api<{ user: User }>('POST', '/api/session', { username, secret }).then((r) => r.user);
export const signOut = () => api<void>('DELETE', '/api/session');
