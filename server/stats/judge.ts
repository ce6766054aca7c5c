import { applyMeanRule, MEAN_RULE_LOOKBACK, type Direction, type RuleId } from './rules.js';
import { enabledMeanRules, type RuleSet } from './rule-set.js';
import { CUSUM_START, cusumStep, EWMA_START, ewmaStep, type CusumState, type EwmaState } from './small-shift.js';

/** What the rules remember of the current segment (a run under one limits version, since the last reset). */
export interface SegmentState {
  /** The most recent standardised means, oldest first, at most MEAN_RULE_LOOKBACK of them. */
  recentZ: number[];
  /** Points judged in this segment so far. */
  count: number;
  ewma: EwmaState;
  cusum: CusumState;
}

export interface JudgedPoint {
  z: number;
  /** The spread statistic (s, R or moving range) and its upper limit; null when there is none. */
  spread: { value: number; ucl: number } | null;
}

export interface RawSignal {
  rule: RuleId;
  direction: Direction | null;
  /** Segment index of the first point of the pattern (for CUSUM, the last point at which it was zero). */
  onsetIndex: number;
}

export function freshSegment(): SegmentState {
  return { recentZ: [], count: 0, ewma: { ...EWMA_START }, cusum: { ...CUSUM_START } };
}

/**
 * Judges one point by every enabled mean-chart rule, the spread limit and the two small-shift
 * detectors. Pure: returns the next state and the signals, leaves the input untouched.
 */
export function judgePoint(set: RuleSet, state: SegmentState, point: JudgedPoint): { state: SegmentState; signals: RawSignal[] } {
  const index = state.count;
  const recentZ = state.recentZ.length >= MEAN_RULE_LOOKBACK ? state.recentZ.slice(1) : state.recentZ.slice();
  recentZ.push(point.z);
  const signals: RawSignal[] = [];
  for (const id of enabledMeanRules(set)) {
    const hit = applyMeanRule(id, recentZ, { runLength: set.runLength });
    if (hit) signals.push({ rule: id, direction: hit.direction, onsetIndex: index - hit.span + 1 });
  }
  let ewma = state.ewma;
  if (set.enabled['ewma-shift']) {
    const step = ewmaStep(set.ewma, state.ewma, point.z, index);
    ewma = step.state;
    if (step.signal) signals.push({ rule: 'ewma-shift', direction: step.signal, onsetIndex: step.state.excursionStart });
  }
  let cusum = state.cusum;
  if (set.enabled['cusum-shift']) {
    const step = cusumStep(set.cusum, state.cusum, point.z, index);
    cusum = step.state;
    if (step.signal) signals.push({ rule: 'cusum-shift', direction: step.signal, onsetIndex: Math.max(0, step.lastZeroAt ?? 0) });
  }
  if (set.enabled['spread-up'] && point.spread && point.spread.value > point.spread.ucl) {
    signals.push({ rule: 'spread-up', direction: 'up', onsetIndex: index });
  }
  return { state: { recentZ, count: index + 1, ewma, cusum }, signals };
}
