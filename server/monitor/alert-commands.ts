import type { AlertView } from '../alerts/contract.js';
import type { StoredAlert } from '../alerts/repository.js';
import type { Clock } from '../clock.js';
import type { Db } from '../db/database.js';
import type { LiveEvent, LiveEventBody } from '../live/messages.js';
import { freshSegment } from '../stats/judge.js';
import type { AlertsService } from './alerts-service.js';
import { alertKey, type LineRuntimes } from './line-runtime.js';
import type { Repositories } from './monitor.js';
import { alertViewFrom } from './views.js';

/** The engine's parts its command rooms share: storage, the clock, the lines in memory, the alert episodes, and the live messages. */
export interface EngineParts {
  db: Db;
  clock: Clock;
  repos: Repositories;
  lines: LineRuntimes;
  alerts: AlertsService;
  /** Numbers and stores live messages inside the caller's transaction. */
  record: (at: number, bodies: LiveEventBody[]) => LiveEvent[];
  /** Sends committed messages (or holds them for the batch they belong to). */
  emit: (messages: LiveEvent[], lineId: number) => void;
}

/** What a person does to an alert — acknowledge, shelve, resolve — each in one transaction, with its live message after the commit. */
export class AlertCommands {
  constructor(private readonly d: EngineParts) {}

  acknowledge(alertId: number, note: string, actor: string): AlertView {
    const now = this.d.clock.now();
    return this.afterTransition(this.d.db.transaction(() => this.withMessage(this.d.alerts.acknowledge(alertId, note, actor, now).updated, now)).immediate());
  }

  /** Shelves an open alert for `minutes` (at most 8 h) with a reason. */
  shelve(alertId: number, minutes: number, reason: string, actor: string): AlertView {
    const now = this.d.clock.now();
    return this.afterTransition(this.d.db.transaction(() => this.withMessage(this.d.alerts.shelve(alertId, now + minutes * 60_000, reason, actor, now), now)).immediate());
  }

  resolve(alertId: number, cause: string, action: string, actor: string): AlertView {
    const now = this.d.clock.now();
    return this.afterTransition(
      this.d.db.transaction(() => {
        const { updated } = this.d.alerts.resolve(alertId, cause, action, actor, now);
        // A resolved shift means its cause was removed: the detectors start afresh on the next check,
        // or they would signal again at once on evidence from before the fix.
        const runtime = this.d.lines.peek(updated.lineId);
        if (updated.kind === 'mean-shift' && runtime?.run && runtime.run.id === updated.runId && runtime.model) {
          this.d.repos.monitorState.save({ lineId: updated.lineId, runId: runtime.run.id, limitsKey: runtime.limitsKey, segmentStartCheckId: null, segment: freshSegment(), previous: null }, now);
        }
        return this.withMessage(updated, now);
      }).immediate(),
    );
  }

  /** Something outside the engine changed how an alert reads (escalation told someone): the boards hear of it. */
  alertChanged(alertId: number): void {
    const alert = this.d.repos.alerts.get(alertId);
    if (!alert) return;
    const now = this.d.clock.now();
    const messages = this.d.db.transaction(() => this.d.record(now, [{ type: 'alert-updated', lineId: alert.lineId, alert: alertViewFrom(this.d.repos.alerts, alert) }])).immediate();
    this.d.emit(messages, alert.lineId);
  }

  private withMessage(updated: StoredAlert, now: number) {
    const view = alertViewFrom(this.d.repos.alerts, updated);
    return { updated, view, messages: this.d.record(now, [{ type: 'alert-updated', lineId: updated.lineId, alert: view }]) };
  }

  /** Committed: the line's open alerts follow, and a resolved mean shift restarts the detectors. */
  private afterTransition(outcome: { updated: StoredAlert; view: AlertView; messages: LiveEvent[] }): AlertView {
    const next = outcome.updated;
    const runtime = this.d.lines.peek(next.lineId);
    if (runtime) {
      const key = alertKey(next.kind, next.direction);
      if (next.state !== 'resolved') {
        if (runtime.openAlerts.get(key)?.id === next.id) runtime.openAlerts.set(key, next);
      } else {
        if (runtime.openAlerts.get(key)?.id === next.id) runtime.openAlerts.delete(key);
        if (next.kind === 'mean-shift' && runtime.run?.id === next.runId && runtime.model) {
          runtime.segment = freshSegment();
          runtime.segmentStartCheckId = null;
          runtime.points = [];
          runtime.previous = null;
        }
      }
    }
    this.d.emit(outcome.messages, next.lineId);
    return outcome.view;
  }
}
