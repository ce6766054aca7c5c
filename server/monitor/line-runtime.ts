import type { LineStop, LineStopRepository } from '../lines/stops-repository.js';
import type { AlertKind, StoredAlert } from '../alerts/repository.js';
import type { CheckRepository } from '../checks/repository.js';
import { notFound } from '../errors.js';
import type { Line, LineRepository, Run } from '../lines/repository.js';
import type { LimitsRepository } from '../limits/repository.js';
import type { Product, ProductRepository } from '../products/repository.js';
import type { ProcessModel } from '../stats/control-limits.js';
import { freshSegment, type SegmentState } from '../stats/judge.js';
import { resolveRuleSet, type RuleSet } from '../stats/rule-set.js';
import type { Direction } from '../stats/rules.js';
import type { MonitorStateRepository } from './state-repository.js';

/** How many of a segment's latest points stay in memory for the change-point estimate. */
export const SEGMENT_MEMORY = 500;

export interface SegmentPoint {
  checkId: number;
  takenAt: number;
  mean: number;
  n: number;
  index: number;
}

export interface WindowCheck {
  checkId: number;
  weights: number[];
}

/** What the engine holds in memory for one line; rebuilt from storage at start. */
export interface LineRuntime {
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
  /** The stop in force while the line stands still; null while it runs. */
  stop: LineStop | null;
  /** When the line last started again after a stop: the sampling clock counts from there. */
  resumedAt: number | null;
  /** Unresolved alerts of the current run, by kind and direction. */
  openAlerts: Map<string, StoredAlert>;
  /** The segment as it was before the latest check, so that check can be corrected; null after a reset. */
  previous: { segment: SegmentState; segmentStartCheckId: number | null } | null;
}

/** The key of an episode among a line's open alerts: one per kind and direction. */
export const alertKey = (kind: AlertKind, direction: Direction | null) => `${kind}|${direction ?? '-'}`;

export interface RuntimeRepositories {
  lines: LineRepository;
  stops: LineStopRepository;
  products: ProductRepository;
  checks: CheckRepository;
  limits: LimitsRepository;
  monitorState: MonitorStateRepository;
  alerts: { unresolved(): StoredAlert[] };
}

/** Every line's runtime: loaded at start from the stored detector state and the last few checks, so start-up does not grow with history. */
export class LineRuntimes {
  private readonly lines = new Map<number, LineRuntime>();

  constructor(private readonly repos: RuntimeRepositories) {
    const unresolved = repos.alerts.unresolved();
    for (const line of repos.lines.list()) this.lines.set(line.id, this.load(line, unresolved));
  }

  /** The line's runtime, loaded on first use for a line created since start. */
  get(lineId: number): LineRuntime {
    let runtime = this.lines.get(lineId);
    if (!runtime) {
      const line = this.repos.lines.get(lineId);
      if (!line) throw notFound(`line ${lineId}`);
      runtime = this.load(line, []);
      this.lines.set(lineId, runtime);
    }
    return runtime;
  }

  /** The runtime if the line is loaded; never reads storage. */
  peek(lineId: number): LineRuntime | undefined {
    return this.lines.get(lineId);
  }

  /** A line was created or renamed, or a product it runs was edited: read it again from storage. */
  reload(lineId: number): void {
    const line = this.repos.lines.get(lineId);
    if (!line) return;
    this.lines.set(lineId, this.load(line, this.repos.alerts.unresolved()));
  }

  reloadRunning(productId: number): void {
    for (const runtime of [...this.lines.values()]) {
      if (runtime.product?.id === productId) this.reload(runtime.line.id);
    }
  }

  all(): IterableIterator<LineRuntime> {
    return this.lines.values();
  }

  ids(): number[] {
    return [...this.lines.keys()];
  }

  private load(line: Line, unresolved: readonly StoredAlert[]): LineRuntime {
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
      stop: this.repos.stops.open(line.id),
      resumedAt: this.repos.stops.lastStartedAt(line.id),
      openAlerts: new Map(),
      previous: null,
    };
    if (!run || !product) return runtime;
    this.applyLimits(runtime, product);
    this.restoreSegment(runtime, run);
    runtime.window = this.repos.checks.latestOfRun(run.id, product.windowSize).map((c) => ({ checkId: c.id, weights: c.weights }));
    runtime.lastTakenAt = this.repos.checks.lastTakenAt(run.id);
    for (const alert of unresolved) {
      if (alert.lineId === line.id && alert.runId === run.id) runtime.openAlerts.set(alertKey(alert.kind, alert.direction), alert);
    }
    return runtime;
  }

  /** The detectors as stored with the last check, if they belong to this run and these limits. */
  private restoreSegment(runtime: LineRuntime, run: Run): void {
    const stored = this.repos.monitorState.get(runtime.line.id);
    if (!stored || stored.runId !== run.id || stored.limitsKey !== runtime.limitsKey) return;
    runtime.segment = stored.segment;
    runtime.segmentStartCheckId = stored.segmentStartCheckId;
    runtime.previous = stored.previous;
    if (stored.segmentStartCheckId === null) return;
    const recent = this.repos.checks.latestOfRun(run.id, SEGMENT_MEMORY, stored.segmentStartCheckId);
    const first = runtime.segment.count - recent.length;
    runtime.points = recent.map((c, i) => ({ checkId: c.id, takenAt: c.takenAt, mean: c.mean, n: c.n, index: first + i }));
  }

  /** Picks the limits in force: the latest approved version for this line and product, else the product's own target and σ. */
  private applyLimits(runtime: LineRuntime, product: Product): void {
    const version = this.repos.limits.latest(runtime.line.id, product.id);
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
}
