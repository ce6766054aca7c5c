import type { LineStop, LineStopRepository, StopReason } from '../lines/stops-repository.js';
import type { AlertRepository, StoredAlert } from '../alerts/repository.js';
import type { AuditRepository } from '../audit/repository.js';
import type { CheckRepository, StoredCheck } from '../checks/repository.js';
import type { Clock } from '../clock.js';
import type { Db } from '../db/database.js';
import { conflict, notFound } from '../errors.js';
import type { LineRepository, Run } from '../lines/repository.js';
import type { LimitsRepository } from '../limits/repository.js';
import type { LiveEvent, LiveEventBody } from '../live/messages.js';
import type { LiveRepository } from '../live/repository.js';
import type { Basis, ProductRepository } from '../products/repository.js';
import { meanChartLimits, spreadChartLimits } from '../stats/control-limits.js';
import { AlertsService } from './alerts-service.js';
import { AlertCommands } from './alert-commands.js';
import { SamplingClock } from './sampling-clock.js';
import { checkStep, type CheckInput, type CheckStep } from './check-step.js';
import { LineRuntimes, SEGMENT_MEMORY, type LineRuntime, type SegmentPoint } from './line-runtime.js';
import type { MonitorStateRepository } from './state-repository.js';
import type { AlertSummary, AlertView, CheckSignalView } from '../alerts/contract.js';
import type { CheckView } from '../checks/contract.js';
import { alertSummary, alertViewFrom, checkSignalView, checkView } from './views.js';


/** A batch whose transaction SQLite rolled back on its own; carries the error that caused it. */
class BatchAborted extends Error {
  constructor(override readonly cause: unknown) {
    super('the batch was rolled back');
  }
}

/** A check's writes failed part-way in a batch run without savepoints: the batch is run again with them. */
class PartialWrite extends Error {
  constructor(override readonly cause: unknown) {
    super('a check failed while it was being written');
  }
}

export interface Repositories {
  lines: LineRepository;
  stops: LineStopRepository;
  products: ProductRepository;
  checks: CheckRepository;
  alerts: AlertRepository;
  limits: LimitsRepository;
  monitorState: MonitorStateRepository;
  audit: AuditRepository;
  live: LiveRepository;
}

export interface MonitorOptions {
  db: Db;
  clock: Clock;
  repos: Repositories;
  overdueGraceMinutes: number;
  /** Called after each commit with the messages it produced, in order. */
  publish: (events: LiveEvent[]) => void;
}

/** A check's answer: the check, its own signals, and a summary of each alert it touched. */
export interface CheckResult {
  created: boolean;
  check: CheckView;
  signals: CheckSignalView[];
  alerts: AlertSummary[];
}

/** Correcting the line's latest check: new values, and why. */
export interface CorrectionInput {
  weights: number[];
  clientId: string;
  reason: string;
  basis?: Basis;
  confirmSuspect?: boolean;
}

/** How long after entry a check may still be corrected: about one shift. */
export const CORRECTION_WINDOW_MS = 12 * 3_600_000;

type Correction = { old: StoredCheck; reason: string } | null;
type JobResult<T> = { ok: true; value: T } | { ok: false; error: unknown };

/**
 * The engine's front: every command (a check, a correction, a changeover, an acknowledgement) runs
 * here in one transaction that stores its change and its live messages; memory moves on and the
 * messages go out only after the commit. The check step (check-step.ts) decides, the alerts service
 * writes the episodes, the line runtimes hold each line's state.
 */
export class Monitor {
  private readonly db: Db;
  private readonly clock: Clock;
  private readonly repos: Repositories;
  private readonly graceMs: number;
  private readonly publish: (events: LiveEvent[]) => void;
  private readonly lines: LineRuntimes;
  private readonly alerts: AlertsService;
  private readonly sampling: SamplingClock;
  private readonly alertCommands: AlertCommands;
  /** While a batch runs: the messages held back until its commit, and the lines it moved. */
  private batch: { messages: LiveEvent[]; lines: Set<number>; savepoints: boolean } | null = null;

  constructor(options: MonitorOptions) {
    this.db = options.db;
    this.clock = options.clock;
    this.repos = options.repos;
    this.graceMs = options.overdueGraceMinutes * 60_000;
    this.publish = options.publish;
    this.lines = new LineRuntimes(options.repos);
    this.alerts = new AlertsService(options.repos.alerts, options.repos.audit);
    const parts = {
      db: this.db,
      clock: this.clock,
      repos: this.repos,
      lines: this.lines,
      alerts: this.alerts,
      record: (at: number, bodies: LiveEventBody[]) => this.record(at, bodies),
      emit: (messages: LiveEvent[], lineId: number) => this.emit(messages, lineId),
    };
    this.alertCommands = new AlertCommands(parts);
    this.sampling = new SamplingClock({ ...parts, graceMs: this.graceMs });
  }

  /** Sends committed messages, or holds them until the batch they belong to has committed. */
  private emit(messages: LiveEvent[], lineId: number): void {
    if (this.batch) {
      this.batch.messages.push(...messages);
      this.batch.lines.add(lineId);
    } else {
      this.publish(messages);
    }
  }

  /**
   * Group commit: runs the jobs in one IMMEDIATE transaction so that they share one flush. A job
   * refused before it writes fails alone; a check that fails while writing sends the batch round again
   * with a savepoint for each job (better-sqlite3 nests transactions that way), so that it rolls back
   * alone. The batch's live messages are returned, not sent: the caller sends them once the commit is
   * on the disk. If the commit itself fails, every job fails with that error (and no message) and the
   * lines they moved are reloaded from storage, which is the truth.
   */
  runBatch<T>(jobs: readonly (() => T)[]): { results: JobResult<T>[]; messages: LiveEvent[] } {
    // a check refused before it writes (the usual failure) needs no savepoint; one that fails while
    // writing throws PartialWrite, and the whole batch is rolled back and run again, a savepoint each
    const fast = this.tryBatch(jobs, false);
    return fast === 'again' ? (this.tryBatch(jobs, true) as { results: JobResult<T>[]; messages: LiveEvent[] }) : fast;
  }

  private tryBatch<T>(jobs: readonly (() => T)[], savepoints: boolean): { results: JobResult<T>[]; messages: LiveEvent[] } | 'again' {
    if (this.batch) throw new Error('batches do not nest');
    const batch = { messages: [] as LiveEvent[], lines: new Set<number>(), savepoints };
    this.batch = batch;
    let results: JobResult<T>[] = [];
    try {
      this.db.transaction(() => {
        results = jobs.map((job) => {
          try {
            return { ok: true as const, value: job() };
          } catch (error) {
            // SQLite rolls the whole transaction back by itself on some errors (a full disk, an I/O
            // error): then the jobs before this one are gone too, and the batch fails as a whole
            if (!this.db.inTransaction) throw new BatchAborted(error instanceof PartialWrite ? error.cause : error);
            if (error instanceof PartialWrite) throw error;
            return { ok: false as const, error };
          }
        });
      }).immediate();
    } catch (caught) {
      this.batch = null;
      for (const lineId of batch.lines) this.lines.reload(lineId);
      if (caught instanceof PartialWrite && !savepoints) return 'again';
      const cause = caught instanceof BatchAborted || caught instanceof PartialWrite ? caught.cause : caught;
      return { results: jobs.map(() => ({ ok: false as const, error: cause })), messages: [] };
    }
    this.batch = null;
    return { results, messages: batch.messages };
  }

  /** Sends messages whose commit is on the disk (a batch's, after its flush). */
  send(messages: LiveEvent[]): void {
    if (messages.length > 0) this.publish(messages);
  }

  /** Numbers and stores live messages; call inside the transaction whose change they report. */
  private record(at: number, bodies: LiveEventBody[]): LiveEvent[] {
    return bodies.map((body) => {
      const { type, lineId, ...rest } = body;
      const checkId = body.type === 'check' ? body.check.id : undefined;
      return this.repos.live.append({ type, at, lineId, body: rest, checkId }) as unknown as LiveEvent;
    });
  }

  /** A line was created or renamed, or a product it runs was edited: read it again from storage. */
  reloadLine(lineId: number): void {
    this.lines.reload(lineId);
  }

  reloadLinesRunning(productId: number): void {
    this.lines.reloadRunning(productId);
  }

  // ---------------------------------------------------------------- checks

  /** Stores and judges one check. Idempotent by clientId. Throws DomainError for anything the caller must fix. */
  recordCheck(lineId: number, input: CheckInput, actor: string | null): CheckResult {
    const existing = this.repos.checks.getByClientId(input.clientId);
    if (existing) return this.replay(existing, lineId);
    const runtime = this.lines.get(lineId);
    return this.enter(runtime, runtime, input, actor, null);
  }

  /**
   * Replaces the line's latest check by a corrected revision (within about a shift of its entry):
   * both are kept, and the new one is judged from the detectors' state before the old one.
   */
  correctCheck(checkId: number, input: CorrectionInput, actor: string): CheckResult {
    const old = this.repos.checks.get(checkId);
    if (!old) throw notFound(`check ${checkId}`);
    const existing = this.repos.checks.getByClientId(input.clientId);
    if (existing) {
      if (existing.revisesCheckId !== checkId) throw conflict(`clientId ${input.clientId} was already used for another check`);
      return this.replay(existing, old.lineId);
    }
    const runtime = this.lines.get(old.lineId);
    this.refuseCorrection(runtime, old);
    const base: LineRuntime = {
      ...runtime,
      segment: runtime.previous?.segment ?? runtime.segment,
      segmentStartCheckId: runtime.previous?.segmentStartCheckId ?? runtime.segmentStartCheckId,
      points: runtime.points.filter((p) => p.checkId !== old.id),
      window: runtime.window.filter((w) => w.checkId !== old.id),
    };
    return this.enter(runtime, base, { ...input, takenAt: old.takenAt, note: old.note }, actor, { old, reason: input.reason });
  }

  private refuseCorrection(runtime: LineRuntime, old: StoredCheck): void {
    if (old.supersededBy !== null) throw conflict(`check ${old.id} was already corrected by check ${old.supersededBy}; correct that one instead`);
    const latest = runtime.window[runtime.window.length - 1];
    if (runtime.run?.id !== old.runId || latest?.checkId !== old.id) throw conflict(`only the line's latest check can be corrected; check ${old.id} is not it`);
    if (this.clock.now() - old.recordedAt > CORRECTION_WINDOW_MS) {
      throw conflict(`check ${old.id} was entered more than ${CORRECTION_WINDOW_MS / 3_600_000} hours ago and can no longer be corrected`);
    }
    if (runtime.model && !runtime.previous) throw conflict(`the limits or detectors were reset after check ${old.id}; it can no longer be corrected`);
  }

  /**
   * The one path every check takes: the pure step decides on `base`, one transaction stores it, then
   * `target` (the line's runtime) moves on. For a correction `base` is the state before the old check.
   */
  private enter(target: LineRuntime, base: LineRuntime, input: CheckInput, actor: string | null, correction: Correction): CheckResult {
    const now = this.clock.now();
    const step = checkStep(base, input, now, actor, correction);
    const previous = base.model ? { segment: base.segment, segmentStartCheckId: base.segmentStartCheckId } : null;
    const store = () => this.storeCheck(base, step, correction, previous, actor, now);
    const outcome = this.batch && !this.batch.savepoints ? this.withoutSavepoint(store) : this.db.transaction(store).immediate();

    // committed: only now does memory move on
    if (base.model) {
      target.segment = step.nextSegment;
      target.segmentStartCheckId = outcome.segmentStartCheckId;
      target.points = outcome.points;
      target.previous = previous;
    }
    target.window = [...step.windowChecks.slice(0, -1), { checkId: outcome.result.check.id, weights: step.nets }];
    target.lastTakenAt = Math.max(target.lastTakenAt ?? -Infinity, step.newCheck.takenAt);
    target.openAlerts = outcome.openAlerts;
    this.emit(outcome.messages, base.line.id);
    return outcome.result;
  }

  /** Runs a check's writes straight in the batch's transaction; a failure part-way sends the batch round again. */
  private withoutSavepoint<T>(store: () => T): T {
    try {
      return store();
    } catch (error) {
      throw new PartialWrite(error);
    }
  }

  /** Writes a judged check with its signals, alerts, detector state and live messages; inside the caller's transaction. */
  private storeCheck(base: LineRuntime, step: CheckStep, correction: Correction, previous: LineRuntime['previous'], actor: string | null, now: number) {
    const { newCheck } = step;
    const lineId = base.line.id;
    const checkId = this.repos.checks.insert(newCheck);
    if (correction) this.supersede(correction, checkId, newCheck.revision, step.nets, actor, now);
    const segmentStartCheckId = base.segmentStartCheckId ?? checkId;
    const point: SegmentPoint = { checkId, takenAt: newCheck.takenAt, mean: newCheck.mean, n: newCheck.n, index: base.segment.count };
    let points = base.points;
    if (base.model) {
      // one new array, not two: this runs for every check
      points = base.points.slice(-(SEGMENT_MEMORY - 1));
      points.push(point);
    }
    const openAlerts = new Map(base.openAlerts);
    const { signals, touched, opened } = this.alerts.storeSignals(base, openAlerts, points, step.pending, { id: checkId, takenAt: newCheck.takenAt }, now);
    const closed = this.alerts.closeOverdue(openAlerts, 'a check arrived', now, checkId);
    if (closed) touched.set(closed.id, closed);
    if (base.model && base.run) {
      this.repos.monitorState.save({ lineId, runId: base.run.id, limitsKey: base.limitsKey, segmentStartCheckId, segment: step.nextSegment, previous }, now);
    }
    // the row just written, without reading it back
    const check = checkView(newCheck, { id: checkId, supersededBy: null }, step.inference);
    const signalViews = checkSignalView(signals);
    const summaries = [...touched.values()].map(alertSummary);
    const messages = this.record(now, [
      { type: 'check', lineId, check, signals: signalViews },
      ...summaries.map((alert) => ({ type: opened.has(alert.id) ? ('alert-opened' as const) : ('alert-updated' as const), lineId, alert })),
    ]);
    const result: CheckResult = { created: true, check, signals: signalViews, alerts: summaries };
    return { segmentStartCheckId, points, openAlerts, messages, result };
  }

  private supersede(correction: NonNullable<Correction>, checkId: number, revision: number, nets: number[], actor: string | null, now: number): void {
    const { old, reason } = correction;
    if (!this.repos.checks.markSuperseded(old.id, checkId)) throw conflict(`check ${old.id} was corrected meanwhile`);
    this.repos.audit.record({
      at: now,
      actor: actor ?? 'unknown',
      action: 'check.correct',
      entity: 'check',
      entityId: old.id,
      before: { checkId: old.id, revision: old.revision, weights: old.weights },
      after: { checkId, revision, weights: nets, reason },
    });
  }

  /** The stored answer for a clientId seen before: the check, its signals and its alerts as they stand now. */
  private replay(existing: StoredCheck, lineId: number): CheckResult {
    if (existing.lineId !== lineId) throw conflict(`clientId ${existing.clientId} was already used for a check on another line`);
    const signals = this.repos.alerts.signalsOfCheck(existing.id);
    const alertIds = [...new Set(signals.map((s) => s.alertId))];
    const alerts = alertIds.map((id) => this.repos.alerts.get(id) as StoredAlert);
    return { created: false, check: checkView(existing, existing), signals: checkSignalView(signals), alerts: alerts.map(alertSummary) };
  }

  // ---------------------------------------------------------------- changeover and limits

  /** Ends the running run (if any) and starts the product on the line. */
  changeover(lineId: number, productId: number, actor: string): Run {
    const runtime = this.lines.get(lineId);
    const product = this.repos.products.get(productId);
    if (!product) throw notFound(`product ${productId}`);
    const now = this.clock.now();
    const before = runtime.run;
    const done = this.db.transaction(() => {
      if (before) this.repos.lines.endRun(before.id, now);
      const started = this.repos.lines.startRun(lineId, productId, now);
      const closed = this.alerts.closeOverdue(new Map(runtime.openAlerts), 'changeover', now);
      this.repos.audit.record({
        at: now,
        actor,
        action: 'line.changeover',
        entity: 'line',
        entityId: lineId,
        before: before ? { runId: before.id, productId: before.productId } : null,
        after: { runId: started.id, productId },
      });
      const messages = this.record(now, [
        ...(closed ? [{ type: 'alert-updated' as const, lineId, alert: alertViewFrom(this.repos.alerts, closed) }] : []),
        { type: 'line-status', lineId, reason: 'changeover' },
      ]);
      return { started, messages };
    }).immediate();
    this.lines.reload(lineId);
    this.emit(done.messages, lineId);
    return done.started;
  }

  /**
   * New limits are being approved for the line's running product: call inside the transaction that
   * stores them, so the version, its audit and its message commit together; `afterCommit` then
   * makes the line judge from a fresh segment.
   */
  limitsChanged(lineId: number): { messages: LiveEvent[]; afterCommit: () => void } {
    const messages = this.record(this.clock.now(), [{ type: 'line-status', lineId, reason: 'limits' }]);
    return {
      messages,
      afterCommit: () => {
        this.lines.reload(lineId);
        this.emit(messages, lineId);
      },
    };
  }

  // ---------------------------------------------------------------- alerts (alert-commands.ts)

  acknowledge = (alertId: number, note: string, actor: string): AlertView => this.alertCommands.acknowledge(alertId, note, actor);
  /** Shelves an open alert for `minutes` (at most 8 h) with a reason. */
  shelve = (alertId: number, minutes: number, reason: string, actor: string): AlertView => this.alertCommands.shelve(alertId, minutes, reason, actor);
  resolve = (alertId: number, cause: string, action: string, actor: string): AlertView => this.alertCommands.resolve(alertId, cause, action, actor);
  /** Something outside the engine changed how an alert reads (escalation told someone): the boards hear of it. */
  alertChanged = (alertId: number): void => this.alertCommands.alertChanged(alertId);

  // ---------------------------------------------------------------- the sampling clock (sampling-clock.ts)

  /** "Check overdue" on every running line whose interval plus grace has passed with no check. */
  sweepOverdue = (): AlertView[] => this.sampling.sweepOverdue();
  /** The line stands still: no check falls due until it starts; an open "check overdue" closes. */
  stopLine = (lineId: number, reason: StopReason, note: string | null, actor: string): LineStop => this.sampling.stopLine(lineId, reason, note, actor);
  /** The line runs again: its first check is due one sampling interval from now. */
  startLine = (lineId: number, actor: string): LineStop => this.sampling.startLine(lineId, actor);

  // ---------------------------------------------------------------- reading

  /** What the status route and the board show for a line, from memory. */
  lineState(lineId: number) {
    const runtime = this.lines.get(lineId);
    const { product, model, run } = runtime;
    const due = this.sampling.nextDue(runtime);
    const open = [...runtime.openAlerts.values()];
    const status: 'steady' | 'watch' | 'act' = open.some((a) => a.severity === 'act') ? 'act' : open.length > 0 ? 'watch' : 'steady';
    const n = product?.subgroupSize ?? 1;
    return {
      line: runtime.line,
      run,
      product,
      status,
      ruleSet: runtime.ruleSet,
      limits: model
        ? {
            source: runtime.limitsVersionId === null ? ('product' as const) : ('approved' as const),
            versionId: runtime.limitsVersionId,
            centre: model.centre,
            sigma: model.sigma,
            meanChart: meanChartLimits(model, n),
            spreadChart: spreadChartLimits(model.sigma, n),
          }
        : null,
      segment: runtime.segment,
      openAlerts: open,
      lastCheckAt: runtime.lastTakenAt,
      stop: runtime.stop,
      nextCheckDue: due,
      overdue: due !== null && this.clock.now() > due + this.graceMs,
    };
  }

  lineIds(): number[] {
    return this.lines.ids();
  }
}
