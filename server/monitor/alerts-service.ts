import type { AlertRepository, ShiftSize, StoredAlert, StoredSignal } from '../alerts/repository.js';
import type { AuditRepository } from '../audit/repository.js';
import { conflict, notFound } from '../errors.js';
import { directedStepChangePoint } from '../stats/change-point.js';
import type { ProcessModel } from '../stats/control-limits.js';
import type { Direction, Severity } from '../stats/rules.js';
import type { PendingSignal } from './check-step.js';
import { alertKey, type LineRuntime, type SegmentPoint } from './line-runtime.js';

const SEVERITY_RANK: Record<Severity, number> = { watch: 1, act: 2 };

/** A new open alert with nothing seen to yet. */
function freshAlert(fields: Pick<StoredAlert, 'lineId' | 'runId' | 'kind' | 'direction' | 'severity' | 'rules' | 'openedAt' | 'onsetAt' | 'onsetCheckId'> & Partial<StoredAlert>): Omit<StoredAlert, 'id'> {
  return {
    state: 'open',
    changePointAt: null,
    changePointCheckId: null,
    size: null,
    latestCheckId: null,
    updatedAt: fields.openedAt,
    acknowledgedBy: null,
    acknowledgedAt: null,
    acknowledgeNote: null,
    resolvedBy: null,
    resolvedAt: null,
    cause: null,
    action: null,
    signalCount: 0,
    shelvedUntil: null,
    shelvedBy: null,
    shelveReason: null,
    shelveCount: 0,
    ...fields,
  };
}

export interface StoredSignals {
  signals: StoredSignal[];
  /** Every alert the check opened or changed, by id, as written. */
  touched: Map<number, StoredAlert>;
  opened: Set<number>;
}

/**
 * Alerts as episodes: opening, joining and escalating them from a check's signals, closing the
 * overdue alert, acknowledging and resolving with their audit. Every method writes in the caller's
 * transaction and returns what it wrote; memory is the caller's to move on after commit.
 */
export class AlertsService {
  constructor(
    private readonly alerts: AlertRepository,
    private readonly audit: AuditRepository,
  ) {}

  /** Writes a check's signals, opening an alert per new kind and direction or joining the open one. */
  storeSignals(runtime: LineRuntime, openAlerts: Map<string, StoredAlert>, points: readonly SegmentPoint[], pending: readonly PendingSignal[], check: { id: number; takenAt: number }, now: number): StoredSignals {
    const out: StoredSignals = { signals: [], touched: new Map(), opened: new Set() };
    // several rules of one check join the same alert: it is written once, as it ends up
    const changed = new Set<number>();
    // every mean-shift signal of one check and direction has the same change point: estimated once
    const changePoints = new Map<Direction, ReturnType<typeof directedChangePoint>>();
    for (const p of pending) {
      const onset = pointAt(points, p.onsetIndex);
      const onsetCheckId = onset?.checkId ?? check.id;
      const onsetAt = onset?.takenAt ?? check.takenAt;
      const key = alertKey(p.kind, p.direction);
      const episode = this.measure(runtime.model, points, p, changePoints);
      const existing = openAlerts.get(key);
      let alert: StoredAlert;
      if (!existing) {
        alert = this.alerts.insert(
          freshAlert({
            lineId: runtime.line.id,
            runId: runtime.run?.id ?? null,
            kind: p.kind,
            direction: p.direction,
            severity: p.severity,
            rules: [p.rule],
            openedAt: now,
            onsetAt,
            onsetCheckId,
            changePointAt: episode.changePoint?.at ?? null,
            changePointCheckId: episode.changePoint?.checkId ?? null,
            size: episode.size,
            latestCheckId: check.id,
            signalCount: 1,
          }),
        );
        out.opened.add(alert.id);
      } else {
        alert = joined(existing, p, { onsetAt, onsetCheckId, ...episode }, check.id, now);
        changed.add(alert.id);
      }
      openAlerts.set(key, alert);
      out.touched.set(alert.id, alert);
      out.signals.push(this.alerts.insertSignal({ alertId: alert.id, checkId: check.id, rule: p.rule, severity: p.severity, direction: p.direction, at: check.takenAt, size: p.size, onsetCheckId }));
    }
    for (const id of changed) this.alerts.update(out.touched.get(id) as StoredAlert);
    return out;
  }

  /**
   * A mean shift is dated and sized on its own points: from its change point on the alert's side of
   * the centre, or else from its onset, to now. A shift down is never sized by a shift up still in
   * the segment. Other kinds keep the signal's own size.
   */
  private measure(model: ProcessModel | null, points: readonly SegmentPoint[], p: PendingSignal, known: Map<Direction, ReturnType<typeof directedChangePoint>>) {
    if (p.kind !== 'mean-shift' || p.direction === null || !model) return { changePoint: null, size: p.size };
    if (!known.has(p.direction)) known.set(p.direction, directedChangePoint(points, model, p.direction));
    const changePoint = known.get(p.direction) ?? null;
    return { changePoint, size: changePoint?.size ?? sizeSince(points, p.onsetIndex, model) ?? p.size };
  }

  /** Closes the line's open "check overdue" alert, if any, because `cause`. */
  closeOverdue(openAlerts: Map<string, StoredAlert>, cause: string, now: number, latestCheckId?: number): StoredAlert | null {
    const key = alertKey('check-overdue', null);
    const overdue = openAlerts.get(key);
    if (!overdue) return null;
    const closed: StoredAlert = { ...overdue, state: 'resolved', resolvedAt: now, resolvedBy: 'heft', cause, action: 'none needed', updatedAt: now, latestCheckId: latestCheckId ?? overdue.latestCheckId };
    this.alerts.update(closed);
    openAlerts.delete(key);
    return closed;
  }

  /** Opens "check overdue" for a line whose check was due at `due`. */
  openOverdue(runtime: LineRuntime, due: number, now: number): StoredAlert {
    return this.alerts.insert(
      freshAlert({ lineId: runtime.line.id, runId: runtime.run?.id ?? null, kind: 'check-overdue', direction: null, severity: 'watch', rules: ['check-overdue'], openedAt: now, onsetAt: due, onsetCheckId: null }),
    );
  }

  acknowledge(alertId: number, note: string, actor: string, now: number): { before: StoredAlert; updated: StoredAlert } {
    return this.transition(alertId, actor, now, (alert) => {
      if (alert.state !== 'open') throw conflict(`alert ${alertId} is ${alert.state}; only an open alert can be acknowledged`);
      return { ...alert, state: 'acknowledged', acknowledgedAt: now, acknowledgedBy: actor, acknowledgeNote: note, updatedAt: now };
    });
  }

  /** Shelves an open alert until `until` with a reason: listed still, escalated no further until it comes back. */
  shelve(alertId: number, until: number, reason: string, actor: string, now: number): StoredAlert {
    const before = this.alerts.get(alertId);
    if (!before) throw notFound(`alert ${alertId}`);
    if (before.state !== 'open') throw conflict(`alert ${alertId} is ${before.state}; only an open alert can be shelved`);
    if (before.shelvedUntil !== null && before.shelvedUntil > now) throw conflict(`alert ${alertId} is shelved already until ${new Date(before.shelvedUntil).toISOString()}`);
    const updated: StoredAlert = { ...before, shelvedUntil: until, shelvedBy: actor, shelveReason: reason, shelveCount: before.shelveCount + 1, updatedAt: now };
    this.alerts.update(updated);
    this.audit.record({ at: now, actor, action: 'alert.shelve', entity: 'alert', entityId: alertId, before: { state: before.state }, after: { until: new Date(until).toISOString(), reason } });
    return updated;
  }

  resolve(alertId: number, cause: string, action: string, actor: string, now: number): { before: StoredAlert; updated: StoredAlert } {
    return this.transition(alertId, actor, now, (alert) => {
      if (alert.state === 'resolved') throw conflict(`alert ${alertId} is already resolved`);
      return { ...alert, state: 'resolved', resolvedAt: now, resolvedBy: actor, cause, action, updatedAt: now };
    });
  }

  private transition(alertId: number, actor: string, now: number, change: (alert: StoredAlert) => StoredAlert): { before: StoredAlert; updated: StoredAlert } {
    const before = this.alerts.get(alertId);
    if (!before) throw notFound(`alert ${alertId}`);
    const updated = change(before);
    this.alerts.update(updated);
    const resolved = updated.state === 'resolved';
    this.audit.record({
      at: now,
      actor,
      action: `alert.${resolved ? 'resolve' : 'acknowledge'}`,
      entity: 'alert',
      entityId: alertId,
      before: { state: before.state },
      after: resolved ? { state: updated.state, cause: updated.cause, action: updated.action } : { state: updated.state, note: updated.acknowledgeNote },
    });
    return { before, updated };
  }
}

/** An open alert joined by one more signal: rules gathered, severity raised, onset and size as now measured. */
function joined(
  alert: StoredAlert,
  p: PendingSignal,
  m: { onsetAt: number; onsetCheckId: number; changePoint: { at: number; checkId: number } | null; size: ShiftSize | null },
  checkId: number,
  now: number,
): StoredAlert {
  const earlier = alert.onsetAt === null || m.onsetAt < alert.onsetAt;
  return {
    ...alert,
    rules: alert.rules.includes(p.rule) ? alert.rules : [...alert.rules, p.rule],
    severity: SEVERITY_RANK[p.severity] > SEVERITY_RANK[alert.severity] ? p.severity : alert.severity,
    onsetAt: earlier ? m.onsetAt : alert.onsetAt,
    onsetCheckId: earlier ? m.onsetCheckId : alert.onsetCheckId,
    changePointAt: m.changePoint?.at ?? alert.changePointAt,
    changePointCheckId: m.changePoint?.checkId ?? alert.changePointCheckId,
    size: m.size,
    latestCheckId: checkId,
    updatedAt: now,
    signalCount: alert.signalCount + 1,
    // a new act-level signal takes a shelved alert off the shelf: it escalates again
    shelvedUntil: p.severity === 'act' && alert.shelvedUntil !== null && alert.shelvedUntil > now ? now : alert.shelvedUntil,
  };
}

/** The segment point at a segment index; the first or last one kept when it lies outside memory. */
function pointAt(points: readonly SegmentPoint[], index: number): SegmentPoint | null {
  if (points.length === 0) return null;
  const first = points[0] as SegmentPoint;
  const found = points[index - first.index];
  return found ?? (index < first.index ? first : (points[points.length - 1] as SegmentPoint));
}

/** The most likely start of a step in the mean, on the alert's side of the centre (Samuel, Pignatiello & Calvin 1998). */
function directedChangePoint(points: readonly SegmentPoint[], model: ProcessModel, direction: Direction) {
  const estimate = directedStepChangePoint(points, model.centre, direction);
  if (!estimate) return null;
  const first = points[estimate.firstShiftedIndex] as SegmentPoint;
  const shift = estimate.shiftedMean - model.centre;
  return { at: first.takenAt, checkId: first.checkId, size: { unit: shift, sigma: shift / model.sigma } };
}

/** The packs-weighted mean of the segment's points from `index` on, less the centre. */
function sizeSince(points: readonly SegmentPoint[], index: number, model: ProcessModel): ShiftSize | null {
  const own = points.filter((p) => p.index >= index);
  const packs = own.reduce((sum, p) => sum + p.n, 0);
  if (packs === 0) return null;
  const shift = own.reduce((sum, p) => sum + p.n * p.mean, 0) / packs - model.centre;
  return { unit: shift, sigma: shift / model.sigma };
}

