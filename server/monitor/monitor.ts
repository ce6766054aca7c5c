import type { AlertKind, AlertRepository, ShiftSize, StoredAlert, StoredSignal } from '../alerts/repository.js';
import type { AuditRepository } from '../audit/repository.js';
import type { CheckRepository, NewCheck, StoredCheck } from '../checks/repository.js';
import type { Clock } from '../clock.js';
import type { Db } from '../db/database.js';
import { conflict, DomainError, notFound } from '../errors.js';
import type { Line, LineRepository, Run } from '../lines/repository.js';
import type { LimitsRepository } from '../limits/repository.js';
import type { Basis, Product, ProductRepository } from '../products/repository.js';
import { directedStepChangePoint } from '../stats/change-point.js';
import { meanChartLimits, spreadChartLimits, standardisedMean, type ProcessModel } from '../stats/control-limits.js';
import { freshSegment, judgePoint, type RawSignal, type SegmentState } from '../stats/judge.js';
import { resolveRuleSet, type RuleSet } from '../stats/rule-set.js';
import type { Direction, RuleId, Severity } from '../stats/rules.js';
import { summarizeSample } from '../stats/sample-summary.js';
import type { LiveRepository } from '../live/repository.js';
import type { MonitorStateRepository } from './state-repository.js';
import { alertView, alertViewFrom, checkView, signalView, type AlertView, type CheckView, type SignalView } from './views.js';

/** A batch whose transaction SQLite rolled back on its own; carries the error that caused it. */
class BatchAborted extends Error {
  constructor(override readonly cause: unknown) {
    super('the batch was rolled back');
  }
}

/** How many of a segment's latest points stay in memory for the change-point estimate. */
export const SEGMENT_MEMORY = 500;

export interface Repositories {
  lines: LineRepository;
  products: ProductRepository;
  checks: CheckRepository;
  alerts: AlertRepository;
  limits: LimitsRepository;
  monitorState: MonitorStateRepository;
  audit: AuditRepository;
  live: LiveRepository;
}

/** A live message before it is numbered. */
export type LiveEventBody =
  | { type: 'check'; lineId: number; check: CheckView; signals: SignalView[] }
  | { type: 'alert-opened' | 'alert-updated'; lineId: number; alert: AlertView }
  | { type: 'line-status'; lineId: number; reason: string };

/** A live message as stored and sent: numbered by seq, stamped with its time. */
export type LiveEvent = LiveEventBody & { seq: number; at: string };

export interface MonitorOptions {
  db: Db;
  clock: Clock;
  repos: Repositories;
  overdueGraceMinutes: number;
  /** Called after each commit with the messages it produced, in order. */
  publish: (events: LiveEvent[]) => void;
}

export interface CheckInput {
  weights: number[];
  clientId: string;
  takenAt?: number;
  basis?: Basis;
  note?: string | null;
  confirmSuspect?: boolean;
}

export interface CheckResult {
  created: boolean;
  check: CheckView;
  signals: SignalView[];
  alerts: AlertView[];
}

interface SegmentPoint {
  checkId: number;
  takenAt: number;
  mean: number;
  n: number;
  index: number;
}

interface WindowCheck {
  checkId: number;
  weights: number[];
}

/** What the monitor holds in memory for one line; rebuilt from storage at start. */
interface LineRuntime {
  line: Line;
  run: Run | null;
  product: Product | null;
  ruleSet: RuleSet;
  model: ProcessModel | null;
  limitsVersionId: number | null;
  limitsKey: string;
  segment: SegmentState;
  segmentStartCheckId: number | null;
  points: SegmentPoint[];
  window: WindowCheck[];
  lastTakenAt: number | null;
  /** Unresolved alerts of the current run, by kind and direction. */
  openAlerts: Map<string, StoredAlert>;
  /** The segment as it was before the latest check, so that check can be corrected; null after a reset. */
  previous: { segment: SegmentState; segmentStartCheckId: number | null } | null;
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

const alertKey = (kind: AlertKind, direction: Direction | null) => `${kind}|${direction ?? '-'}`;

function kindOf(rule: RuleId): AlertKind {
  if (rule === 'spread-up') return 'spread-up';
  if (rule === 'pack-below-t2') return 'pack-below-t2';
  return 'mean-shift';
}

const SEVERITY_RANK: Record<Severity, number> = { watch: 1, act: 2 };

interface PendingSignal {
  rule: RuleId;
  kind: AlertKind;
  direction: Direction | null;
  severity: Severity;
  onsetIndex: number;
  size: ShiftSize | null;
}

/**
 * The per-line engine: every check goes through here, is judged on the line's in-memory segment
 * (so its cost does not grow with history), and is stored together with its signals, the alerts
 * they open or join, and the detectors' new state, in one transaction. Messages go out after commit.
 */
export class Monitor {
  private readonly lines = new Map<number, LineRuntime>();
  private readonly db: Db;
  private readonly clock: Clock;
  private readonly repos: Repositories;
  private readonly graceMs: number;
  private readonly publish: (events: LiveEvent[]) => void;

  constructor(options: MonitorOptions) {
    this.db = options.db;
    this.clock = options.clock;
    this.repos = options.repos;
    this.graceMs = options.overdueGraceMinutes * 60_000;
    this.publish = options.publish;
    this.loadAll();
  }

  /** While a batch runs: the messages held back until its commit, and the lines it moved. */
  private batch: { messages: LiveEvent[]; lines: Set<number> } | null = null;

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
   * Group commit: runs the jobs in one IMMEDIATE transaction, each in a savepoint of its own (better-
   * sqlite3 nests transactions that way), so a job that fails rolls back alone and the rest share one
   * fsync. Messages go out only after the commit; if the commit itself fails, every job fails with
   * that error and the lines they moved are reloaded from storage, which is the truth.
   */
  runBatch<T>(jobs: readonly (() => T)[]): ({ ok: true; value: T } | { ok: false; error: unknown })[] {
    if (this.batch) throw new Error('batches do not nest');
    const batch = { messages: [] as LiveEvent[], lines: new Set<number>() };
    this.batch = batch;
    let results: ({ ok: true; value: T } | { ok: false; error: unknown })[] = [];
    try {
      this.db.transaction(() => {
        results = jobs.map((job) => {
          try {
            return { ok: true as const, value: job() };
          } catch (error) {
            // SQLite rolls the whole transaction back by itself on some errors (a full disk, an I/O
            // error): then the jobs before this one are gone too, and the batch fails as a whole
            if (!this.db.inTransaction) throw new BatchAborted(error);
            return { ok: false as const, error };
          }
        });
      }).immediate();
    } catch (caught) {
      this.batch = null;
      const error = caught instanceof BatchAborted ? caught.cause : caught;
      for (const lineId of batch.lines) this.reloadLine(lineId);
      return jobs.map(() => ({ ok: false as const, error }));
    }
    this.batch = null;
    this.publish(batch.messages);
    return results;
  }

  /** Numbers and stores live messages; call inside the transaction whose change they report. */
  private record(at: number, bodies: LiveEventBody[]): LiveEvent[] {
    return bodies.map((body) => {
      const { type, lineId, ...rest } = body;
      return this.repos.live.append({ type, at, lineId, body: rest }) as unknown as LiveEvent;
    });
  }

  // ---------------------------------------------------------------- loading

  private loadAll(): void {
    const unresolved = this.repos.alerts.unresolved();
    for (const line of this.repos.lines.list()) this.lines.set(line.id, this.loadLine(line, unresolved));
  }

  private loadLine(line: Line, unresolved: readonly StoredAlert[]): LineRuntime {
    const run = this.repos.lines.openRun(line.id);
    const product = run ? this.repos.products.get(run.productId) : null;
    const runtime: LineRuntime = {
      line,
      run,
      product,
      ruleSet: resolveRuleSet(product?.rules),
      model: null,
      limitsVersionId: null,
      limitsKey: 'none',
      segment: freshSegment(),
      segmentStartCheckId: null,
      points: [],
      window: [],
      lastTakenAt: null,
      openAlerts: new Map(),
      previous: null,
    };
    if (!run || !product) return runtime;
    this.applyLimits(runtime);
    const stored = this.repos.monitorState.get(line.id);
    if (stored && stored.runId === run.id && stored.limitsKey === runtime.limitsKey) {
      runtime.segment = stored.segment;
      runtime.segmentStartCheckId = stored.segmentStartCheckId;
      runtime.previous = stored.previous;
      if (stored.segmentStartCheckId !== null) {
        const recent = this.repos.checks.latestOfRun(run.id, SEGMENT_MEMORY, stored.segmentStartCheckId);
        const first = runtime.segment.count - recent.length;
        runtime.points = recent.map((c, i) => ({ checkId: c.id, takenAt: c.takenAt, mean: c.mean, n: c.n, index: first + i }));
      }
    }
    runtime.window = this.repos.checks
      .latestOfRun(run.id, product.windowSize)
      .map((c) => ({ checkId: c.id, weights: c.weights }));
    runtime.lastTakenAt = this.repos.checks.lastTakenAt(run.id);
    for (const alert of unresolved) {
      if (alert.lineId === line.id && alert.runId === run.id) runtime.openAlerts.set(alertKey(alert.kind, alert.direction), alert);
    }
    return runtime;
  }

  /** Picks the limits in force: the latest approved version for this line and product, else the product's own target and σ. */
  private applyLimits(runtime: LineRuntime): void {
    const { line, product } = runtime;
    if (!product) return;
    const version = this.repos.limits.latest(line.id, product.id);
    if (version) {
      runtime.model = { centre: version.centre, sigma: version.sigma };
      runtime.limitsVersionId = version.id;
      runtime.limitsKey = `version:${version.id}`;
    } else if (product.sigma !== null) {
      runtime.model = { centre: product.target, sigma: product.sigma };
      runtime.limitsVersionId = null;
      runtime.limitsKey = `product:${product.id}:${product.target}:${product.sigma}:${product.updatedAt}`;
    } else {
      runtime.model = null;
      runtime.limitsVersionId = null;
      runtime.limitsKey = `product:${product.id}:no-sigma`;
    }
    runtime.ruleSet = resolveRuleSet(product.rules);
  }

  private runtime(lineId: number): LineRuntime {
    let runtime = this.lines.get(lineId);
    if (!runtime) {
      const line = this.repos.lines.get(lineId);
      if (!line) throw notFound(`line ${lineId}`);
      runtime = this.loadLine(line, []);
      this.lines.set(lineId, runtime);
    }
    return runtime;
  }

  /** A line was created or renamed, or a product it runs was edited: read it again from storage. */
  reloadLine(lineId: number): void {
    const line = this.repos.lines.get(lineId);
    if (!line) return;
    this.lines.set(lineId, this.loadLine(line, this.repos.alerts.unresolved()));
  }

  reloadLinesRunning(productId: number): void {
    for (const runtime of [...this.lines.values()]) {
      if (runtime.product?.id === productId) this.reloadLine(runtime.line.id);
    }
  }

  // ---------------------------------------------------------------- checks

  /** Stores and judges one check. Idempotent by clientId. Throws DomainError for anything the caller must fix. */
  recordCheck(lineId: number, input: CheckInput, actor: string | null): CheckResult {
    const existing = this.repos.checks.getByClientId(input.clientId);
    if (existing) return this.replay(existing, lineId);

    const runtime = this.runtime(lineId);
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
    if (old.supersededBy !== null) throw conflict(`check ${checkId} was already corrected by check ${old.supersededBy}; correct that one instead`);
    const runtime = this.runtime(old.lineId);
    const latest = runtime.window[runtime.window.length - 1];
    if (runtime.run?.id !== old.runId || latest?.checkId !== old.id) {
      throw conflict(`only the line's latest check can be corrected; check ${checkId} is not it`);
    }
    if (this.clock.now() - old.recordedAt > CORRECTION_WINDOW_MS) {
      throw conflict(`check ${checkId} was entered more than ${CORRECTION_WINDOW_MS / 3_600_000} hours ago and can no longer be corrected`);
    }
    if (runtime.model && !runtime.previous) {
      throw conflict(`the limits or detectors were reset after check ${checkId}; it can no longer be corrected`);
    }
    const base: LineRuntime = {
      ...runtime,
      segment: runtime.previous?.segment ?? runtime.segment,
      segmentStartCheckId: runtime.previous?.segmentStartCheckId ?? runtime.segmentStartCheckId,
      points: runtime.points.filter((p) => p.checkId !== old.id),
      window: runtime.window.filter((w) => w.checkId !== old.id),
    };
    return this.enter(runtime, base, { ...input, takenAt: old.takenAt, note: old.note }, actor, { old, reason: input.reason });
  }

  /**
   * The one path every check takes: validate, compute, judge on `base`, store in one transaction,
   * then move `target` (the line's runtime) on. For a correction `base` is the state before the
   * corrected check.
   */
  private enter(
    target: LineRuntime,
    base: LineRuntime,
    input: CheckInput,
    actor: string | null,
    correction: { old: StoredCheck; reason: string } | null,
  ): CheckResult {
    const runtime = base;
    const lineId = base.line.id;
    const { run, product } = runtime;
    if (!run || !product) throw conflict(`no product is running on line ${runtime.line.code}: change over to a product first`);

    const now = this.clock.now();
    const takenAt = input.takenAt ?? now;
    if (takenAt > now + 5 * 60_000) {
      throw new DomainError(400, 'bad-request', 'takenAt: lies in the future', [{ field: 'takenAt', message: 'lies in the future' }]);
    }
    if (takenAt < run.startedAt) {
      throw new DomainError(400, 'bad-request', 'takenAt: before the current run started', [
        { field: 'takenAt', message: `before the current run started (${new Date(run.startedAt).toISOString()})` },
      ]);
    }
    const basis = input.basis ?? 'net';
    const nets = basis === 'gross' ? input.weights.map((w) => w - product.tare) : input.weights.slice();
    const notPositive = nets.flatMap((w, i) => (w > 0 ? [] : [i]));
    if (notPositive.length > 0) {
      const issues = notPositive.map((i) => ({ field: `weights.${i}`, message: `after the tare of ${product.tare} ${product.unit} this is not above 0` }));
      throw new DomainError(400, 'bad-request', issues.map((i) => `${i.field}: ${i.message}`).join('; '), issues);
    }
    if (!input.confirmSuspect) {
      const lo = 0.5 * product.nominal;
      const hi = 1.5 * product.nominal;
      const suspect = nets.flatMap((w, i) => (w < lo || w > hi ? [{ index: i, value: input.weights[i] as number }] : []));
      if (suspect.length > 0) {
        throw new DomainError(
          422,
          'suspect-weights',
          `weights ${suspect.map((s) => s.value).join(', ')} lie outside ${lo}–${hi} ${product.unit} (half to one and a half times nominal): probably a slipped decimal; correct them or send confirmSuspect: true`,
          suspect.map((s) => ({ field: `weights.${s.index}`, message: `${s.value} is outside ${lo}–${hi} ${product.unit}` })),
          { suspect },
        );
      }
    }

    const own = summarizeSample(nets, product.target);
    const belowT1 = product.t1 === null ? 0 : nets.filter((w) => w < (product.t1 as number)).length;
    const belowT2 = product.t2 === null ? 0 : nets.filter((w) => w < (product.t2 as number)).length;
    const windowChecks = [...runtime.window.slice(-(product.windowSize - 1)), { checkId: 0, weights: nets }];
    const pooled = windowChecks.flatMap((c) => c.weights);
    const windowed = summarizeSample(pooled, product.target);

    const { nextSegment, pending } = this.judge(runtime, product, nets, own.mean, own.sd, own.range, belowT2);

    const newCheck: NewCheck = {
      lineId,
      runId: run.id,
      productId: product.id,
      clientId: input.clientId,
      takenAt,
      recordedAt: now,
      basis,
      enteredBy: actor,
      note: input.note ?? null,
      revision: correction ? correction.old.revision + 1 : 1,
      revisesCheckId: correction?.old.id ?? null,
      revisionReason: correction?.reason ?? null,
      n: own.n,
      mean: own.mean,
      sd: own.sd,
      range: own.range,
      target: product.target,
      belowT1,
      belowT2,
      windowChecks: windowChecks.length,
      windowN: windowed.n,
      windowMean: windowed.mean,
      windowSd: windowed.sd,
      limitsVersionId: runtime.limitsVersionId,
      weights: nets,
      grossWeights: basis === 'gross' ? input.weights.slice() : null,
    };

    const previous = runtime.model ? { segment: runtime.segment, segmentStartCheckId: runtime.segmentStartCheckId } : null;
    const outcome = this.db.transaction(() => {
      const checkId = this.repos.checks.insert(newCheck);
      if (correction) {
        if (!this.repos.checks.markSuperseded(correction.old.id, checkId)) throw conflict(`check ${correction.old.id} was corrected meanwhile`);
        this.repos.audit.record({
          at: now,
          actor: actor ?? 'unknown',
          action: 'check.correct',
          entity: 'check',
          entityId: correction.old.id,
          before: { checkId: correction.old.id, revision: correction.old.revision, weights: correction.old.weights },
          after: { checkId, revision: newCheck.revision, weights: nets, reason: correction.reason },
        });
      }
      const segmentStartCheckId = runtime.segmentStartCheckId ?? checkId;
      const point: SegmentPoint = { checkId, takenAt, mean: own.mean, n: own.n, index: runtime.segment.count };
      const points = runtime.model ? [...runtime.points.slice(-(SEGMENT_MEMORY - 1)), point] : runtime.points;
      const openAlerts = new Map(runtime.openAlerts);
      const { signals, touched, opened } = this.storeSignals(runtime, openAlerts, points, pending, checkId, takenAt, now);
      const overdue = openAlerts.get(alertKey('check-overdue', null));
      if (overdue) {
        const closed: StoredAlert = {
          ...overdue,
          state: 'resolved',
          resolvedAt: now,
          resolvedBy: 'heft',
          cause: 'a check arrived',
          action: 'none needed',
          updatedAt: now,
          latestCheckId: checkId,
        };
        this.repos.alerts.update(closed);
        openAlerts.delete(alertKey('check-overdue', null));
        touched.set(closed.id, closed);
      }
      if (runtime.model) {
        this.repos.monitorState.save(
          { lineId, runId: run.id, limitsKey: runtime.limitsKey, segmentStartCheckId, segment: nextSegment, previous },
          now,
        );
      }
      // the row just written, without reading it back
      const check = checkView({ ...newCheck, id: checkId, supersededBy: null });
      const signalViews = signals.map(signalView);
      const alertViews = [...touched.values()].map((a) => alertViewFrom(this.repos.alerts, a));
      const messages = this.record(now, [
        { type: 'check', lineId, check, signals: signalViews },
        ...alertViews.map((alert) => ({
          type: opened.has(alert.id) ? ('alert-opened' as const) : ('alert-updated' as const),
          lineId,
          alert,
        })),
      ]);
      return { checkId, segmentStartCheckId, points, openAlerts, check, signalViews, alertViews, messages };
    }).immediate();

    // committed: only now does memory move on
    if (runtime.model) {
      target.segment = nextSegment;
      target.segmentStartCheckId = outcome.segmentStartCheckId;
      target.points = outcome.points;
      target.previous = previous;
    }
    target.window = [...windowChecks.slice(0, -1), { checkId: outcome.checkId, weights: nets }];
    target.lastTakenAt = Math.max(target.lastTakenAt ?? -Infinity, takenAt);
    target.openAlerts = outcome.openAlerts;

    this.emit(outcome.messages, lineId);
    return { created: true, check: outcome.check, signals: outcome.signalViews, alerts: outcome.alertViews };
  }

  private replay(existing: StoredCheck, lineId: number): CheckResult {
    if (existing.lineId !== lineId) {
      throw conflict(`clientId ${existing.clientId} was already used for a check on another line`);
    }
    const stored = this.repos.alerts;
    const alerts = stored.alertIdsForCheck(existing.id).map((id) => stored.get(id) as StoredAlert);
    const signals = alerts.flatMap((a) => stored.signalsOf(a.id).filter((s) => s.checkId === existing.id));
    return {
      created: false,
      check: checkView(existing),
      signals: signals.map(signalView),
      alerts: alerts.map((a) => alertViewFrom(this.repos.alerts, a)),
    };
  }

  /** Runs the rules on the would-be next point; pure with respect to the runtime. */
  private judge(
    runtime: LineRuntime,
    product: Product,
    nets: readonly number[],
    m: number,
    sd: number | null,
    r: number,
    belowT2: number,
  ): { nextSegment: SegmentState; pending: PendingSignal[] } {
    const pending: PendingSignal[] = [];
    const set = runtime.ruleSet;
    let nextSegment = runtime.segment;
    const model = runtime.model;
    if (model) {
      const n = nets.length;
      const z = standardisedMean(m, n, model);
      let spread: { value: number; ucl: number } | null = null;
      if (n >= 2) {
        const limits = spreadChartLimits(model.sigma, n);
        spread = { value: limits.chart === 'S' ? (sd as number) : r, ucl: limits.ucl };
      } else {
        const previous = runtime.points[runtime.points.length - 1];
        if (previous && previous.n === 1) {
          spread = { value: Math.abs(m - previous.mean), ucl: spreadChartLimits(model.sigma, 1).ucl };
        }
      }
      const judged = judgePoint(set, runtime.segment, { z, spread });
      nextSegment = judged.state;
      const meanSize: ShiftSize = { unit: m - model.centre, sigma: (m - model.centre) / model.sigma };
      for (const s of judged.signals) {
        pending.push(this.pendingFrom(s, set, model, meanSize, sd));
      }
    }
    if (set.enabled['pack-below-t2'] && belowT2 > 0 && product.t2 !== null) {
      const lowest = Math.min(...nets);
      pending.push({
        rule: 'pack-below-t2',
        kind: 'pack-below-t2',
        direction: 'down',
        severity: set.severity['pack-below-t2'],
        onsetIndex: runtime.segment.count,
        size: { unit: lowest - product.t2, sigma: model ? (lowest - product.t2) / model.sigma : null },
      });
    }
    return { nextSegment, pending };
  }

  private pendingFrom(s: RawSignal, set: RuleSet, model: ProcessModel, meanSize: ShiftSize, sd: number | null): PendingSignal {
    const kind = kindOf(s.rule);
    let size: ShiftSize = meanSize;
    if (kind === 'spread-up') {
      const excess = (sd ?? 0) - model.sigma;
      size = { unit: excess, sigma: excess / model.sigma };
    }
    return { rule: s.rule, kind, direction: s.direction, severity: set.severity[s.rule], onsetIndex: s.onsetIndex, size };
  }

  /** Writes this check's signals, opening an alert per new kind and direction or joining the open one. */
  private storeSignals(
    runtime: LineRuntime,
    openAlerts: Map<string, StoredAlert>,
    points: readonly SegmentPoint[],
    pending: readonly PendingSignal[],
    checkId: number,
    takenAt: number,
    now: number,
  ): { signals: StoredSignal[]; touched: Map<number, StoredAlert>; opened: Set<number> } {
    const signals: StoredSignal[] = [];
    const touched = new Map<number, StoredAlert>();
    const opened = new Set<number>();
    const pointAt = (index: number): SegmentPoint | null => {
      if (points.length === 0) return null;
      const first = points[0] as SegmentPoint;
      const found = points[index - first.index];
      return found ?? (index < first.index ? first : (points[points.length - 1] as SegmentPoint));
    };
    for (const p of pending) {
      const onset = pointAt(p.onsetIndex);
      const onsetCheckId = onset?.checkId ?? checkId;
      const onsetAt = onset?.takenAt ?? takenAt;
      const key = alertKey(p.kind, p.direction);
      let alert = openAlerts.get(key);
      // a mean shift's size is measured on its own points (from its change point, or else its onset,
      // to now), so a shift down is never sized by a shift up still in the segment
      const meanShift = p.kind === 'mean-shift' && p.direction !== null && runtime.model;
      const changePoint = meanShift ? this.changePoint(points, runtime.model as ProcessModel, p.direction as Direction) : null;
      const size = meanShift ? (changePoint?.size ?? this.sizeSince(points, p.onsetIndex, runtime.model as ProcessModel) ?? p.size) : p.size;
      if (!alert) {
        alert = this.repos.alerts.insert({
          lineId: runtime.line.id,
          runId: runtime.run?.id ?? null,
          kind: p.kind,
          direction: p.direction,
          severity: p.severity,
          state: 'open',
          rules: [p.rule],
          openedAt: now,
          onsetAt,
          onsetCheckId,
          changePointAt: changePoint?.at ?? null,
          changePointCheckId: changePoint?.checkId ?? null,
          size,
          latestCheckId: checkId,
          updatedAt: now,
          acknowledgedBy: null,
          acknowledgedAt: null,
          acknowledgeNote: null,
          resolvedBy: null,
          resolvedAt: null,
          cause: null,
          action: null,
        });
        opened.add(alert.id);
      } else {
        const earlier = alert.onsetAt === null || onsetAt < alert.onsetAt;
        alert = {
          ...alert,
          rules: alert.rules.includes(p.rule) ? alert.rules : [...alert.rules, p.rule],
          severity: SEVERITY_RANK[p.severity] > SEVERITY_RANK[alert.severity] ? p.severity : alert.severity,
          onsetAt: earlier ? onsetAt : alert.onsetAt,
          onsetCheckId: earlier ? onsetCheckId : alert.onsetCheckId,
          changePointAt: changePoint?.at ?? alert.changePointAt,
          changePointCheckId: changePoint?.checkId ?? alert.changePointCheckId,
          size,
          latestCheckId: checkId,
          updatedAt: now,
        };
        this.repos.alerts.update(alert);
      }
      openAlerts.set(key, alert);
      touched.set(alert.id, alert);
      signals.push(
        this.repos.alerts.insertSignal({
          alertId: alert.id,
          checkId,
          rule: p.rule,
          severity: p.severity,
          direction: p.direction,
          at: takenAt,
          size: p.size,
          onsetCheckId,
        }),
      );
    }
    return { signals, touched, opened };
  }

  /** The most likely start of a step in the mean, on the alert's side of the centre (Samuel, Pignatiello & Calvin 1998). */
  private changePoint(points: readonly SegmentPoint[], model: ProcessModel, direction: Direction) {
    const estimate = directedStepChangePoint(points, model.centre, direction);
    if (!estimate) return null;
    const first = points[estimate.firstShiftedIndex] as SegmentPoint;
    const shift = estimate.shiftedMean - model.centre;
    return { at: first.takenAt, checkId: first.checkId, size: { unit: shift, sigma: shift / model.sigma } };
  }

  /** The packs-weighted mean of the segment's points from `index` on, less the centre. */
  private sizeSince(points: readonly SegmentPoint[], index: number, model: ProcessModel): ShiftSize | null {
    const own = points.filter((p) => p.index >= index);
    const packs = own.reduce((sum, p) => sum + p.n, 0);
    if (packs === 0) return null;
    const shift = own.reduce((sum, p) => sum + p.n * p.mean, 0) / packs - model.centre;
    return { unit: shift, sigma: shift / model.sigma };
  }

  // ---------------------------------------------------------------- changeover and limits

  /** Ends the running run (if any) and starts the product on the line. */
  changeover(lineId: number, productId: number, actor: string): Run {
    const runtime = this.runtime(lineId);
    const product = this.repos.products.get(productId);
    if (!product) throw notFound(`product ${productId}`);
    const now = this.clock.now();
    const before = runtime.run;
    const touched: StoredAlert[] = [];
    const run = this.db.transaction(() => {
      if (before) this.repos.lines.endRun(before.id, now);
      const started = this.repos.lines.startRun(lineId, productId, now);
      const overdue = runtime.openAlerts.get(alertKey('check-overdue', null));
      if (overdue) {
        const closed: StoredAlert = { ...overdue, state: 'resolved', resolvedAt: now, resolvedBy: 'heft', cause: 'changeover', action: 'none needed', updatedAt: now };
        this.repos.alerts.update(closed);
        touched.push(closed);
      }
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
        ...touched.map((a) => ({ type: 'alert-updated' as const, lineId, alert: alertViewFrom(this.repos.alerts, a) })),
        { type: 'line-status', lineId, reason: 'changeover' },
      ]);
      return { started, messages };
    }).immediate();
    this.reloadLine(lineId);
    this.emit(run.messages, lineId);
    return run.started;
  }

  /** New limits were approved for the line's running product: judge from a fresh segment. */
  limitsChanged(lineId: number): void {
    this.reloadLine(lineId);
    const messages = this.db.transaction(() => this.record(this.clock.now(), [{ type: 'line-status', lineId, reason: 'limits' }])).immediate();
    this.emit(messages, lineId);
  }

  // ---------------------------------------------------------------- alerts

  acknowledge(alertId: number, note: string, actor: string): AlertView {
    return this.transition(alertId, actor, (alert, now) => {
      if (alert.state !== 'open') throw conflict(`alert ${alertId} is ${alert.state}; only an open alert can be acknowledged`);
      return { ...alert, state: 'acknowledged', acknowledgedAt: now, acknowledgedBy: actor, acknowledgeNote: note, updatedAt: now };
    });
  }

  resolve(alertId: number, cause: string, action: string, actor: string): AlertView {
    return this.transition(alertId, actor, (alert, now) => {
      if (alert.state === 'resolved') throw conflict(`alert ${alertId} is already resolved`);
      return { ...alert, state: 'resolved', resolvedAt: now, resolvedBy: actor, cause, action, updatedAt: now };
    });
  }

  private transition(alertId: number, actor: string, change: (alert: StoredAlert, now: number) => StoredAlert): AlertView {
    const now = this.clock.now();
    const outcome = this.db.transaction(() => {
      const alert = this.repos.alerts.get(alertId);
      if (!alert) throw notFound(`alert ${alertId}`);
      const updated = change(alert, now);
      this.repos.alerts.update(updated);
      this.repos.audit.record({
        at: now,
        actor,
        action: `alert.${updated.state === 'resolved' ? 'resolve' : 'acknowledge'}`,
        entity: 'alert',
        entityId: alertId,
        before: { state: alert.state },
        after: updated.state === 'resolved' ? { state: updated.state, cause: updated.cause, action: updated.action } : { state: updated.state, note: updated.acknowledgeNote },
      });
      const runtime = this.lines.get(alert.lineId);
      // A resolved shift means its cause was removed: the detectors start afresh on the next check,
      // or they would signal again at once on evidence from before the fix.
      if (updated.state === 'resolved' && updated.kind === 'mean-shift' && runtime?.run?.id === alert.runId && runtime.run && runtime.model) {
        this.repos.monitorState.save(
          { lineId: alert.lineId, runId: runtime.run.id, limitsKey: runtime.limitsKey, segmentStartCheckId: null, segment: freshSegment(), previous: null },
          now,
        );
      }
      const messages = this.record(now, [{ type: 'alert-updated', lineId: updated.lineId, alert: alertViewFrom(this.repos.alerts, updated) }]);
      return { updated, messages };
    }).immediate();
    const next = outcome.updated;
    const runtime = this.lines.get(next.lineId);
    if (runtime) {
      const key = alertKey(next.kind, next.direction);
      if (next.state === 'resolved') {
        if (runtime.openAlerts.get(key)?.id === next.id) runtime.openAlerts.delete(key);
        if (next.kind === 'mean-shift' && runtime.run?.id === next.runId && runtime.model) {
          runtime.segment = freshSegment();
          runtime.segmentStartCheckId = null;
          runtime.points = [];
          runtime.previous = null;
        }
      } else if (runtime.openAlerts.get(key)?.id === next.id) {
        runtime.openAlerts.set(key, next);
      }
    }
    this.emit(outcome.messages, next.lineId);
    return (outcome.messages[0] as Extract<LiveEvent, { alert: AlertView }>).alert;
  }

  // ---------------------------------------------------------------- overdue

  /** Opens "check overdue" on every running line whose sampling interval plus grace has passed with no check. */
  sweepOverdue(): AlertView[] {
    const now = this.clock.now();
    const opened: AlertView[] = [];
    for (const runtime of this.lines.values()) {
      const due = this.nextDue(runtime);
      if (due === null || now <= due + this.graceMs) continue;
      if (runtime.openAlerts.has(alertKey('check-overdue', null))) continue;
      const { alert, messages } = this.db.transaction(() => {
        const created = this.repos.alerts.insert({
          lineId: runtime.line.id,
          runId: runtime.run?.id ?? null,
          kind: 'check-overdue',
          direction: null,
          severity: 'watch',
          state: 'open',
          rules: ['check-overdue'],
          openedAt: now,
          onsetAt: due,
          onsetCheckId: null,
          changePointAt: null,
          changePointCheckId: null,
          size: null,
          latestCheckId: null,
          updatedAt: now,
          acknowledgedBy: null,
          acknowledgedAt: null,
          acknowledgeNote: null,
          resolvedBy: null,
          resolvedAt: null,
          cause: null,
          action: null,
        });
        return { alert: created, messages: this.record(now, [{ type: 'alert-opened', lineId: runtime.line.id, alert: alertView(created, []) }]) };
      }).immediate();
      runtime.openAlerts.set(alertKey('check-overdue', null), alert);
      opened.push(alertView(alert, []));
      this.emit(messages, runtime.line.id);
    }
    return opened;
  }

  private nextDue(runtime: LineRuntime): number | null {
    if (!runtime.run || !runtime.product) return null;
    const from = Math.max(runtime.lastTakenAt ?? runtime.run.startedAt, runtime.run.startedAt);
    return from + runtime.product.samplingMinutes * 60_000;
  }

  // ---------------------------------------------------------------- reading

  /** What the status route and the board show for a line, from memory. */
  lineState(lineId: number) {
    const runtime = this.runtime(lineId);
    const { product, model, run } = runtime;
    const due = this.nextDue(runtime);
    const open = [...runtime.openAlerts.values()];
    const status: 'steady' | 'watch' | 'act' = open.some((a) => a.severity === 'act')
      ? 'act'
      : open.length > 0
        ? 'watch'
        : 'steady';
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
      nextCheckDue: due,
      overdue: due !== null && this.clock.now() > due + this.graceMs,
    };
  }

  lineIds(): number[] {
    return [...this.lines.keys()];
  }
}
