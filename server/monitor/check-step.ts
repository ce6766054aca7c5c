import type { AlertKind, ShiftSize } from '../alerts/repository.js';
import type { CheckSource, NewCheck, StoredCheck } from '../checks/repository.js';
import { conflict, DomainError } from '../errors.js';
import type { Basis, Product } from '../products/repository.js';
import { spreadChartLimits, standardisedMean, type ProcessModel } from '../stats/control-limits.js';
import { judgePoint, type RawSignal, type SegmentState } from '../stats/judge.js';
import type { RuleSet } from '../stats/rule-set.js';
import type { Direction, RuleId, Severity } from '../stats/rules.js';
import { summarizeSample, type Inference } from '../stats/sample-summary.js';
import type { LineRuntime, WindowCheck } from './line-runtime.js';

export interface CheckInput {
  weights: number[];
  clientId: string;
  takenAt?: number;
  basis?: Basis;
  note?: string | null;
  confirmSuspect?: boolean;
  /** Where the weights came from; typed when not said. */
  source?: CheckSource;
}

/** A signal as judged, before it is stored and joined to an alert. */
export interface PendingSignal {
  rule: RuleId;
  kind: AlertKind;
  direction: Direction | null;
  severity: Severity;
  onsetIndex: number;
  size: ShiftSize | null;
}

/** What one check will write and change, decided without touching storage or the runtime. */
export interface CheckStep {
  newCheck: NewCheck;
  nets: number[];
  /** The rolling window including this check (its id 0 until stored). */
  windowChecks: WindowCheck[];
  nextSegment: SegmentState;
  pending: PendingSignal[];
  /** The check's and the window's t, p and interval, worked out once here for the view too. */
  inference: { own: Inference; window: Inference };
}

/** How far ahead of the server's clock a check's time may be (a tablet's clock runs fast). */
export const FUTURE_TOLERANCE_MS = 5 * 60_000;

/**
 * The pure check step: validates the time and the weights, takes off the tare, refuses suspect
 * weights, computes the check's and the window's statistics and judges it on `base`, the line's
 * state before it. Throws DomainError (nothing written) for anything the caller must fix.
 */
export function checkStep(
  base: LineRuntime,
  input: CheckInput,
  now: number,
  actor: string | null,
  correction: { old: StoredCheck; reason: string } | null,
): CheckStep {
  const { run, product } = base;
  if (!run || !product) throw conflict(`no product is running on line ${base.line.code}: change over to a product first`);
  const takenAt = input.takenAt ?? now;
  checkTime(takenAt, now, run.startedAt);
  const basis = input.basis ?? 'net';
  const nets = netWeights(input.weights, basis, product);
  if (!input.confirmSuspect) refuseSuspect(nets, input.weights, product);

  const own = summarizeSample(nets, product.target);
  const belowT1 = product.t1 === null ? 0 : nets.filter((w) => w < (product.t1 as number)).length;
  const belowT2 = product.t2 === null ? 0 : nets.filter((w) => w < (product.t2 as number)).length;
  const windowChecks = [...base.window.slice(-(product.windowSize - 1)), { checkId: 0, weights: nets }];
  const windowed = summarizeSample(pooled(windowChecks), product.target);
  const { nextSegment, pending } = judge(base, product, nets, { mean: own.mean, sd: own.sd, range: own.range, belowT2 });

  const newCheck: NewCheck = {
    lineId: base.line.id,
    runId: run.id,
    productId: product.id,
    clientId: input.clientId,
    takenAt,
    recordedAt: now,
    basis,
    source: input.source ?? 'keyed',
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
    limitsVersionId: base.limitsVersionId,
    weights: nets,
    grossWeights: basis === 'gross' ? input.weights.slice() : null,
  };
  return { newCheck, nets, windowChecks, nextSegment, pending, inference: { own, window: windowed } };
}

function checkTime(takenAt: number, now: number, runStartedAt: number): void {
  if (takenAt > now + FUTURE_TOLERANCE_MS) {
    throw new DomainError(400, 'bad-request', 'takenAt: lies in the future', [{ field: 'takenAt', message: 'lies in the future' }]);
  }
  if (takenAt < runStartedAt) {
    throw new DomainError(400, 'bad-request', 'takenAt: before the current run started', [
      { field: 'takenAt', message: `before the current run started (${new Date(runStartedAt).toISOString()})` },
    ]);
  }
}

/** The window's weights in one array; a plain loop, as flatMap measured some 4 % of a check's engine time. */
function pooled(checks: readonly { weights: readonly number[] }[]): number[] {
  const all: number[] = [];
  for (const c of checks) for (const w of c.weights) all.push(w);
  return all;
}

/** Net weights: as keyed, or less the product's tare when keyed gross; each must stay above 0. */
function netWeights(weights: readonly number[], basis: Basis, product: Product): number[] {
  const nets = basis === 'gross' ? weights.map((w) => w - product.tare) : weights.slice();
  const notPositive: number[] = [];
  nets.forEach((w, i) => {
    if (!(w > 0)) notPositive.push(i);
  });
  if (notPositive.length > 0) {
    const issues = notPositive.map((i) => ({ field: `weights.${i}`, message: `after the tare of ${product.tare} ${product.unit} this is not above 0` }));
    throw new DomainError(400, 'bad-request', issues.map((i) => `${i.field}: ${i.message}`).join('; '), issues);
  }
  return nets;
}

/** A weight outside half to one and a half times nominal is most likely a slipped decimal. */
function refuseSuspect(nets: readonly number[], keyed: readonly number[], product: Product): void {
  const lo = 0.5 * product.nominal;
  const hi = 1.5 * product.nominal;
  const suspect: { index: number; value: number }[] = [];
  nets.forEach((w, i) => {
    if (w < lo || w > hi) suspect.push({ index: i, value: keyed[i] as number });
  });
  if (suspect.length === 0) return;
  throw new DomainError(
    422,
    'suspect-weights',
    `weights ${suspect.map((s) => s.value).join(', ')} lie outside ${lo}–${hi} ${product.unit} (half to one and a half times nominal): probably a slipped decimal; correct them or send confirmSuspect: true`,
    suspect.map((s) => ({ field: `weights.${s.index}`, message: `${s.value} is outside ${lo}–${hi} ${product.unit}` })),
    { suspect },
  );
}

function kindOf(rule: RuleId): AlertKind {
  if (rule === 'spread-up') return 'spread-up';
  if (rule === 'pack-below-t2') return 'pack-below-t2';
  return 'mean-shift';
}

interface CheckFigures {
  mean: number;
  sd: number | null;
  range: number;
  belowT2: number;
}

/** Runs the rules on the would-be next point of the segment. */
function judge(base: LineRuntime, product: Product, nets: readonly number[], f: CheckFigures): { nextSegment: SegmentState; pending: PendingSignal[] } {
  const pending: PendingSignal[] = [];
  const set = base.ruleSet;
  let nextSegment = base.segment;
  const model = base.model;
  if (model) {
    const judged = judgePoint(set, base.segment, { z: standardisedMean(f.mean, nets.length, model), spread: spreadPoint(base, model, nets.length, f) });
    nextSegment = judged.state;
    const meanSize: ShiftSize = { unit: f.mean - model.centre, sigma: (f.mean - model.centre) / model.sigma };
    for (const s of judged.signals) pending.push(pendingFrom(s, set, model, meanSize, f.sd));
  }
  if (set.enabled['pack-below-t2'] && f.belowT2 > 0 && product.t2 !== null) {
    const lowest = Math.min(...nets);
    pending.push({
      rule: 'pack-below-t2',
      kind: 'pack-below-t2',
      direction: 'down',
      severity: set.severity['pack-below-t2'],
      onsetIndex: base.segment.count,
      size: { unit: lowest - product.t2, sigma: model ? (lowest - product.t2) / model.sigma : null },
    });
  }
  return { nextSegment, pending };
}

/** The spread chart's point: S or R of the check, or the moving range between single packs. */
function spreadPoint(base: LineRuntime, model: ProcessModel, n: number, f: CheckFigures): { value: number; ucl: number } | null {
  if (n >= 2) {
    const limits = spreadChartLimits(model.sigma, n);
    return { value: limits.chart === 'S' ? (f.sd as number) : f.range, ucl: limits.ucl };
  }
  const previous = base.points[base.points.length - 1];
  if (!previous || previous.n !== 1) return null;
  return { value: Math.abs(f.mean - previous.mean), ucl: spreadChartLimits(model.sigma, 1).ucl };
}

function pendingFrom(s: RawSignal, set: RuleSet, model: ProcessModel, meanSize: ShiftSize, sd: number | null): PendingSignal {
  const kind = kindOf(s.rule);
  let size: ShiftSize = meanSize;
  if (kind === 'spread-up') {
    const excess = (sd ?? 0) - model.sigma;
    size = { unit: excess, sigma: excess / model.sigma };
  }
  return { rule: s.rule, kind, direction: s.direction, severity: set.severity[s.rule], onsetIndex: s.onsetIndex, size };
}
