import { createArlSimulation, describeFalseAlarmInterval, type ArlSimulation } from '../stats/false-alarm.js';
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
const MAX_LENGTH = 100_000;
/** How long one slice of a background simulation may hold the event loop. */
const SLICE_MS = 8;
/** Background simulations at once; a set-up page asking for more is told to wait. */
export const MAX_SIMULATIONS = 4;

const cache = new Map<string, { arl: number; se: number }>();
const running = new Map<string, ArlSimulation>();

const simulationOf = (set: RuleSet, n: number) => createArlSimulation(set, { seed: SEED, runs: SIMULATED_RUNS, maxLength: MAX_LENGTH, subgroupSize: n >= 2 ? n : undefined });

function figure(hit: { arl: number; se: number }, samplingMinutes: number): FalseAlarmFigure {
  const intervalMinutes = hit.arl * samplingMinutes;
  return {
    arlChecks: hit.arl,
    standardError: hit.se,
    intervalMinutes,
    words: describeFalseAlarmInterval(intervalMinutes),
    method: `seeded simulation of ${SIMULATED_RUNS} in-control runs through the enabled rules (pack-below-t2 not counted)`,
  };
}

function store(key: string, simulation: ArlSimulation): { arl: number; se: number } {
  const estimate = simulation.estimate();
  const hit = { arl: estimate.arl, se: estimate.standardError };
  cache.set(key, hit);
  return hit;
}

/**
 * The in-control false-alarm interval of a rule set for checks of n packs: a seeded simulation
 * through the same judging code, cached by rule set and n (the answer depends on nothing else).
 * pack-below-t2 is left out: a pack below T2 is a real event, never a false alarm of the chart.
 */
export function falseAlarmFigure(set: RuleSet, n: number, samplingMinutes: number): FalseAlarmFigure {
  const key = ruleSetKey(set, n);
  let hit = cache.get(key);
  if (!hit) {
    const simulation = simulationOf(set, n);
    simulation.step(SIMULATED_RUNS);
    hit = store(key, simulation);
  }
  return figure(hit, samplingMinutes);
}

export type FalseAlarmProgress = { state: 'ready'; figure: FalseAlarmFigure; runs: number } | { state: 'working'; runsDone: number; runs: number } | { state: 'busy'; runs: number };

/**
 * The same figure without holding up other requests: cached, it is ready; otherwise the simulation
 * runs in slices of a few milliseconds between the server's other work, and the caller asks again.
 */
export function falseAlarmProgress(set: RuleSet, n: number, samplingMinutes: number): FalseAlarmProgress {
  const key = ruleSetKey(set, n);
  const hit = cache.get(key);
  if (hit) return { state: 'ready', figure: figure(hit, samplingMinutes), runs: SIMULATED_RUNS };
  let simulation = running.get(key);
  if (!simulation) {
    if (running.size >= MAX_SIMULATIONS) return { state: 'busy', runs: SIMULATED_RUNS };
    const started = simulationOf(set, n);
    simulation = started;
    running.set(key, started);
    const slice = () => {
      const until = performance.now() + SLICE_MS;
      while (!started.done && performance.now() < until) started.step(10);
      if (!started.done) return void setImmediate(slice);
      store(key, started);
      running.delete(key);
    };
    setImmediate(slice);
  }
  return { state: 'working', runsDone: simulation.estimate().runs, runs: SIMULATED_RUNS };
}
