import type { AlertView } from '../alerts/contract.js';
import { conflict } from '../errors.js';
import type { LineStop, StopReason } from '../lines/stops-repository.js';
import type { EngineParts } from './alert-commands.js';
import { alertKey, type LineRuntime } from './line-runtime.js';
import { alertView, alertViewFrom } from './views.js';

export interface SamplingClockDeps extends EngineParts {
  graceMs: number;
}

/**
 * When a line's next check falls due, "check overdue" when it does not come, and the line's running
 * state that suspends the clock: stopped (a break, cleaning, between shifts) nothing falls due, and
 * the clock restarts when the line starts.
 */
export class SamplingClock {
  constructor(private readonly d: SamplingClockDeps) {}

  /** Opens "check overdue" on every running line whose sampling interval plus grace has passed with no check. */
  sweepOverdue(): AlertView[] {
    const now = this.d.clock.now();
    const opened: AlertView[] = [];
    for (const runtime of this.d.lines.all()) {
      const due = this.nextDue(runtime);
      if (due === null || now <= due + this.d.graceMs) continue;
      if (runtime.openAlerts.has(alertKey('check-overdue', null))) continue;
      const { alert, messages } = this.d.db.transaction(() => {
        const created = this.d.alerts.openOverdue(runtime, due, now);
        return { alert: created, messages: this.d.record(now, [{ type: 'alert-opened', lineId: runtime.line.id, alert: alertView(created, []) }]) };
      }).immediate();
      runtime.openAlerts.set(alertKey('check-overdue', null), alert);
      opened.push(alertView(alert, []));
      this.d.emit(messages, runtime.line.id);
    }
    return opened;
  }

  /** When the next check falls due: one interval after the last check, the run's start or the line's restart, whichever is latest; never while stopped. */
  nextDue(runtime: LineRuntime): number | null {
    if (!runtime.run || !runtime.product || runtime.stop) return null;
    const from = Math.max(runtime.lastTakenAt ?? runtime.run.startedAt, runtime.run.startedAt, runtime.resumedAt ?? 0);
    return from + runtime.product.samplingMinutes * 60_000;
  }

  /** The line stands still: no check falls due until it starts again, and an open "check overdue" closes. */
  stopLine(lineId: number, reason: StopReason, note: string | null, actor: string): LineStop {
    const runtime = this.d.lines.get(lineId);
    if (runtime.stop) throw conflict(`line ${runtime.line.code} is already stopped (${runtime.stop.reason}) since ${new Date(runtime.stop.stoppedAt).toISOString()}`);
    const now = this.d.clock.now();
    const done = this.d.db.transaction(() => {
      const stop = this.d.repos.stops.stop(lineId, reason, note, now, actor);
      const closed = this.d.alerts.closeOverdue(new Map(runtime.openAlerts), 'line stopped', now);
      this.d.repos.audit.record({ at: now, actor, action: 'line.stop', entity: 'line', entityId: lineId, after: { stopId: stop.id, reason, note } });
      const messages = this.d.record(now, [
        ...(closed ? [{ type: 'alert-updated' as const, lineId, alert: alertViewFrom(this.d.repos.alerts, closed) }] : []),
        { type: 'line-status', lineId, reason: 'stopped' },
      ]);
      return { stop, closed, messages };
    }).immediate();
    runtime.stop = done.stop;
    if (done.closed) runtime.openAlerts.delete(alertKey('check-overdue', null));
    this.d.emit(done.messages, lineId);
    return done.stop;
  }

  /** The line runs again: its first check is due one sampling interval from now. */
  startLine(lineId: number, actor: string): LineStop {
    const runtime = this.d.lines.get(lineId);
    const open = runtime.stop;
    if (!open) throw conflict(`line ${runtime.line.code} is running already`);
    const now = this.d.clock.now();
    const done = this.d.db.transaction(() => {
      const ended = this.d.repos.stops.start(open.id, now, actor);
      this.d.repos.audit.record({ at: now, actor, action: 'line.start', entity: 'line', entityId: lineId, before: { stopId: open.id, reason: open.reason }, after: null });
      return { ended, messages: this.d.record(now, [{ type: 'line-status', lineId, reason: 'started' }]) };
    }).immediate();
    runtime.stop = null;
    runtime.resumedAt = now;
    this.d.emit(done.messages, lineId);
    return done.ended;
  }
}
