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

/*
 * The answers' shapes, derived from the server's one API contract (the zod schemas beside each
 * route): type-only imports, erased from the bundle, so the pages and the server cannot disagree.
 */
import type { AlertSummary, AlertView, CheckSignalView, SignalView } from '../../server/alerts/contract.js';
import type { SessionUser } from '../../server/auth/contract.js';
import type { CheckAnswer, CheckView, StatusView } from '../../server/checks/contract.js';
import type { Plant } from '../../server/health/contract.js';
import type { LineView } from '../../server/lines/contract.js';
import type { ProductView } from '../../server/products/contract.js';

export type { AlertSummary, CheckAnswer, Plant };
export type User = SessionUser;
export type Product = ProductView;
export type Line = LineView;
export type Signal = SignalView;
/** A check's signals for one alert, as the check's answer gives them (the check and its time are the answer's own). */
export type CheckSignal = CheckSignalView;
export type Alert = AlertView;
export type Check = CheckView;
export type Status = StatusView;
export type ChartLimits = NonNullable<StatusView['limits']>['meanChart'];
export type SpreadChartLimits = NonNullable<StatusView['limits']>['spreadChart'];

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
