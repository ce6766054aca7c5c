import type { FastifyInstance } from 'fastify';
import { randomUUID } from 'node:crypto';
import type { LiveEvent } from '../server/live/messages.js';
import { mulberry32, normalGenerator } from '../server/stats/random.js';
import { toScale } from './generate.js';

export interface SimulatorOptions {
  app: FastifyInstance;
  /** A checks token for every line: the simulator posts through the API like a networked scale. */
  token: string;
  everyMs?: number;
  seed?: number;
}

/**
 * The demo's simulated operator and supervisor. Every ~20 s each line gets a check, posted over the
 * same HTTP route a scale uses; now and then a line's filler shifts for a while. Alerts nobody
 * handles are acknowledged after 90 s and resolved after 4 minutes, as a supervisor would.
 */
export function startSimulator(options: SimulatorOptions): { stop: () => void; onLive: (events: LiveEvent[]) => void } {
  const { app, token } = options;
  const uniform = mulberry32(options.seed ?? Date.now() % 2 ** 31);
  const normal = normalGenerator(uniform);
  const everyMs = options.everyMs ?? 20_000;
  const shifts = new Map<number, { sigma: number; left: number }>();
  const timers: NodeJS.Timeout[] = [];
  let stopped = false;

  const postFor = async (lineId: number) => {
    const line = app.heft.repos.lines.get(lineId);
    const state = line ? app.heft.monitor.lineState(lineId) : null;
    const product = state?.product ?? null;
    // a stopped line (a break, cleaning, between the calendar's shifts) makes nothing to weigh
    if (!product || state?.stop) return;
    let shift = shifts.get(lineId);
    if (!shift && uniform() < 0.03) shift = { sigma: (uniform() < 0.5 ? -1 : 1) * (1.5 + uniform() * 1.5), left: 6 + Math.floor(uniform() * 6) };
    const sigma = product.sigma ?? product.nominal * 0.004;
    const offset = shift ? shift.sigma : 0;
    if (shift) {
      shift.left -= 1;
      if (shift.left <= 0) shifts.delete(lineId);
      else shifts.set(lineId, shift);
    }
    const weights = Array.from({ length: product.subgroupSize }, () => {
      const net = product.target + sigma * (offset + normal());
      return toScale(product.entryBasis === 'gross' ? net + product.tare : net, product.unit);
    });
    const res = await app.inject({
      method: 'POST',
      url: `/api/lines/${lineId}/checks`,
      headers: { authorization: `Bearer ${token}` },
      payload: { weights, clientId: randomUUID(), basis: product.entryBasis, confirmSuspect: true },
    });
    if (res.statusCode >= 300) app.log.warn({ status: res.statusCode, body: res.body }, 'simulated check refused');
  };

  const tick = () => {
    if (stopped) return;
    const ids = app.heft.repos.lines.list().map((l) => l.id);
    ids.forEach((id, i) => {
      const t = setTimeout(() => void postFor(id).catch((err) => app.log.error({ err }, 'simulator failed')), (i * everyMs) / Math.max(ids.length, 1));
      t.unref();
    });
  };
  const interval = setInterval(tick, everyMs);
  interval.unref();
  tick();

  const onLive = (events: LiveEvent[]) => {
    for (const e of events) {
      if (e.type !== 'alert-opened' || e.alert.kind === 'check-overdue') continue;
      const id = e.alert.id;
      const ack = setTimeout(() => {
        const a = app.heft.repos.alerts.get(id);
        if (!stopped && a?.state === 'open') app.heft.monitor.acknowledge(id, 'simulated supervisor: on my way', 'supervisor');
      }, 90_000);
      const resolve = setTimeout(() => {
        const a = app.heft.repos.alerts.get(id);
        if (!stopped && a && a.state !== 'resolved') {
          shifts.delete(a.lineId);
          app.heft.monitor.resolve(id, 'simulated: filler drifted', 'simulated: filler re-set to target', 'supervisor');
        }
      }, 240_000);
      ack.unref();
      resolve.unref();
      timers.push(ack, resolve);
    }
  };

  return {
    stop: () => {
      stopped = true;
      clearInterval(interval);
      for (const t of timers) clearTimeout(t);
    },
    onLive,
  };
}
