import { randomUUID } from 'node:crypto';
import type { AlertSummary } from '../alerts/contract.js';
import type { HeftContext } from '../context.js';
import { conflict, DomainError, type FieldIssue } from '../errors.js';
import { FUTURE_TOLERANCE_MS } from '../monitor/check-step.js';
import type { CheckResult } from '../monitor/monitor.js';
import type { PacksAnswer } from './contract.js';
import type { CheckweigherRepository, WaitingPack } from './repository.js';

type Formed = Pick<CheckResult, 'check' | 'alerts'>;

/**
 * An automatic checkweigher's stream: its packs wait (durably) until n of them make a check, judged
 * like a keyed one and marked `checkweigher`; a partial check is judged with what it has once the
 * sampling interval has passed since its first pack. Runs inside the caller's batch transaction.
 */
export function createCheckweigherService(ctx: Pick<HeftContext, 'db' | 'clock' | 'repos' | 'monitor'> & { packs: CheckweigherRepository }) {
  const { db, clock, repos, monitor, packs } = ctx;

  /** Checks from the line's waiting packs: every full n, and the rest too when `flushPartial`. */
  function formChecks(lineId: number, actor: string | null, flushPartial: boolean): Formed[] {
    const state = monitor.lineState(lineId);
    const { run, product } = state;
    if (!run || !product) return [];
    const waiting = packs.waiting(lineId);
    const earlier = waiting.filter((p) => p.runId !== run.id);
    if (earlier.length > 0) {
      // packs left from before a changeover cannot be judged by the new product: into the audit trail, not lost
      repos.audit.record({ at: clock.now(), actor: actor ?? 'checkweigher', action: 'packs.unjudged', entity: 'line', entityId: lineId, after: { reason: 'left waiting when the line changed over', packs: earlier } });
      packs.remove(lineId, (earlier[earlier.length - 1] as WaitingPack).id);
    }
    const current = waiting.filter((p) => p.runId === run.id);
    const n = product.subgroupSize;
    const formed: Formed[] = [];
    for (let start = 0; start < current.length; start += n) {
      const group = current.slice(start, start + n);
      if (group.length < n && !flushPartial) break;
      const result = monitor.recordCheck(
        lineId,
        { weights: group.map((p) => p.weight), clientId: randomUUID(), takenAt: Math.max(...group.map((p) => p.weighedAt)), basis: product.entryBasis, confirmSuspect: true, source: 'checkweigher' },
        actor,
      );
      packs.remove(lineId, (group[group.length - 1] as WaitingPack).id);
      formed.push({ check: result.check, alerts: result.alerts });
    }
    return formed;
  }

  /** Refuses, naming each pack's field, what the check step would refuse later (nothing is written then). */
  function refuseBadPacks(lineId: number, list: { weight: number; at: number }[]): void {
    const { run, product } = monitor.lineState(lineId);
    if (!run || !product) throw conflict(`no product is running on line ${lineId}: change over to a product first`);
    const now = clock.now();
    const issues: FieldIssue[] = [];
    list.forEach((p, i) => {
      if (p.at > now + FUTURE_TOLERANCE_MS) issues.push({ field: `packs.${i}.at`, message: 'lies in the future' });
      else if (p.at < run.startedAt) issues.push({ field: `packs.${i}.at`, message: `before the current run started (${new Date(run.startedAt).toISOString()})` });
      if (product.entryBasis === 'gross' && p.weight - product.tare <= 0) issues.push({ field: `packs.${i}.weight`, message: `not above the tare (${product.tare} ${product.unit})` });
    });
    if (issues.length > 0) throw new DomainError(400, 'bad-request', `${issues[0]?.field}: ${issues[0]?.message}`, issues.slice(0, 50));
  }

  function answer(created: boolean, lineId: number, formed: Formed[]): PacksAnswer {
    const alerts = new Map<number, AlertSummary>();
    for (const f of formed) for (const a of f.alerts) alerts.set(a.id, a);
    return {
      created,
      checks: formed.map((f) => ({ id: f.check.id, n: f.check.n, mean: f.check.mean, takenAt: f.check.takenAt })),
      alerts: [...alerts.values()],
      waiting: packs.count(lineId),
    };
  }

  return {
    /** Takes a post of packs once (by clientId), forms every check they complete, and says how many wait. */
    receive(lineId: number, body: { packs: { weight: number; at?: number | undefined }[]; clientId: string }, actor: string | null): PacksAnswer {
      if (!repos.lines.get(lineId)) throw new DomainError(404, 'not-found', `line ${lineId} was not found`);
      const seen = packs.batch(body.clientId);
      if (seen) {
        if (seen.lineId !== lineId) throw conflict(`clientId ${body.clientId} was already used for packs on another line`);
        const stored = seen.checkIds.map((id) => repos.checks.get(id)).filter((c) => c !== null);
        return { created: false, checks: stored.map((c) => ({ id: c.id, n: c.n, mean: c.mean, takenAt: new Date(c.takenAt).toISOString() })), alerts: [], waiting: packs.count(lineId) };
      }
      const now = clock.now();
      const list = body.packs.map((p) => ({ weight: p.weight, at: p.at ?? now }));
      refuseBadPacks(lineId, list);
      const run = monitor.lineState(lineId).run as NonNullable<ReturnType<typeof monitor.lineState>['run']>;
      try {
        return db.transaction(() => {
          packs.add(lineId, run.id, list, now);
          const formed = formChecks(lineId, actor, false);
          packs.recordBatch(body.clientId, lineId, list.length, formed.map((f) => f.check.id), now);
          return answer(true, lineId, formed);
        })();
      } catch (err) {
        // the checks formed before the failure were rolled back with it: the line's memory follows storage
        monitor.reloadLine(lineId);
        throw err;
      }
    },

    /** Lines whose first waiting pack is a sampling interval old: their partial check, judged with what it has. */
    linesWithStalePacks(): number[] {
      const now = clock.now();
      return packs.oldestPerLine().flatMap(({ lineId, oldest }) => {
        const product = monitor.lineState(lineId).product;
        return product && now - oldest >= product.samplingMinutes * 60_000 ? [lineId] : [];
      });
    },

    /** Judges the line's waiting packs as one partial check (inside the caller's batch). */
    flushPartial(lineId: number): PacksAnswer {
      return answer(true, lineId, formChecks(lineId, 'checkweigher (partial check)', true));
    },
  };
}

export type CheckweigherService = ReturnType<typeof createCheckweigherService>;
