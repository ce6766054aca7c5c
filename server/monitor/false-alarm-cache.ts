import { describeFalseAlarmInterval, simulateArl } from '../stats/false-alarm.js';
import { ruleSetKey, type RuleSet } from '../stats/rule-set.js';

export interface FalseAlarmFigure {
  /** Expected checks between false alarms while the process is in control (ARL₀). */
  arlChecks: number;
  standardError: number;
  /** ARL₀ × sampling interval. */
  intervalMinutes: number;
  words: string;
  method: string;
}

const SIMULATED_RUNS = 2000;
const SEED = 20_261_201;
const cache = new Map<string, { arl: number; se: number }>();

/**
 * The in-control false-alarm interval of a rule set for checks of n packs: a seeded simulation
 * through the same judging code, cached by rule set and n (the answer depends on nothing else).
 * pack-below-t2 is left out: a pack below T2 is a real event, never a false alarm of the chart.
 */
export function falseAlarmFigure(set: RuleSet, n: number, samplingMinutes: number): FalseAlarmFigure {
  const key = ruleSetKey(set, n);
  let hit = cache.get(key);
  if (!hit) {
    const estimate = simulateArl(set, { seed: SEED, runs: SIMULATED_RUNS, maxLength: 100_000, subgroupSize: n >= 2 ? n : undefined });
    hit = { arl: estimate.arl, se: estimate.standardError };
    cache.set(key, hit);
  }
  const intervalMinutes = hit.arl * samplingMinutes;
  return {
    arlChecks: hit.arl,
    standardError: hit.se,
    intervalMinutes,
    words: describeFalseAlarmInterval(intervalMinutes),
    method: `seeded simulation of ${SIMULATED_RUNS} in-control runs through the enabled rules (pack-below-t2 not counted)`,
  };
}
