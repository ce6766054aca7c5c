import { sampleSd, range } from './descriptive.js';
import { freshSegment, judgePoint, type JudgedPoint } from './judge.js';
import { spreadChartLimits } from './control-limits.js';
import { mulberry32, normalGenerator } from './random.js';
import type { RuleSet } from './rule-set.js';

export interface ArlOptions {
  seed: number;
  runs: number;
  /** A run that reaches this many points without a signal is cut there (its length counts as the cap). */
  maxLength: number;
  /** When set, packs of this size are simulated so the spread chart takes part; otherwise z ~ N(0, 1) directly. */
  subgroupSize?: number;
  /** A mean shift, in σ of the plotted mean, present from the first point. */
  shift?: number;
}

export interface ArlEstimate {
  arl: number;
  /** Standard error of the estimate: sd of the run lengths / √runs. */
  standardError: number;
  runs: number;
  censored: number;
}

/** A simulation that can be run a few runs at a time (to keep a server answering), with the same result as in one go. */
export interface ArlSimulation {
  /** Simulates up to `runs` more runs; returns how many runs are done in all. */
  step(runs: number): number;
  readonly done: boolean;
  /** The estimate over the runs done so far (all of them once `done`). */
  estimate(): ArlEstimate;
}

/**
 * Average run length of a rule set by seeded Monte Carlo simulation of in-control (or shifted) points
 * run through the same judging code the server uses (method as in Champ & Woodall 1987 §4 checks).
 */
export function createArlSimulation(set: RuleSet, options: ArlOptions): ArlSimulation {
  const normal = normalGenerator(mulberry32(options.seed));
  const n = options.subgroupSize ?? 0;
  const spreadLimits = n >= 2 ? spreadChartLimits(1, n) : null;
  const shift = options.shift ?? 0;
  const packs = new Array<number>(Math.max(n, 1));
  let sum = 0;
  let sumSq = 0;
  let censored = 0;
  let done = 0;

  function nextPoint(): JudgedPoint {
    if (!spreadLimits) return { z: normal() + shift, spread: null };
    for (let i = 0; i < n; i += 1) packs[i] = normal();
    let m = 0;
    for (let i = 0; i < n; i += 1) m += packs[i] as number;
    m /= n;
    const spreadValue = spreadLimits.chart === 'S' ? (sampleSd(packs) as number) : range(packs);
    return { z: m * Math.sqrt(n) + shift, spread: { value: spreadValue, ucl: spreadLimits.ucl } };
  }

  function oneRun(): void {
    let state = freshSegment();
    let length = 0;
    for (;;) {
      length += 1;
      const judged = judgePoint(set, state, nextPoint());
      state = judged.state;
      if (judged.signals.length > 0) break;
      if (length >= options.maxLength) {
        censored += 1;
        break;
      }
    }
    sum += length;
    sumSq += length * length;
    done += 1;
  }

  return {
    step(runs: number): number {
      const until = Math.min(options.runs, done + runs);
      while (done < until) oneRun();
      return done;
    },
    get done() {
      return done >= options.runs;
    },
    estimate(): ArlEstimate {
      const k = Math.max(done, 1);
      const arl = sum / k;
      const variance = Math.max(0, sumSq / k - arl * arl);
      return { arl, standardError: Math.sqrt(variance / k), runs: done, censored };
    },
  };
}

/** Average run length of a rule set by seeded simulation, in one go (see createArlSimulation). */
export function simulateArl(set: RuleSet, options: ArlOptions): ArlEstimate {
  const simulation = createArlSimulation(set, options);
  simulation.step(options.runs);
  return simulation.estimate();
}

/** Plain words for an expected interval between false alarms, e.g. "about one false alarm per 4 days". */
export function describeFalseAlarmInterval(minutes: number): string {
  const hours = minutes / 60;
  if (hours < 1) return `about one false alarm per ${Math.round(minutes)} minutes`;
  if (hours < 48) return `about one false alarm per ${Math.round(hours)} hours`;
  const days = hours / 24;
  if (days < 21) return `about one false alarm per ${Math.round(days)} days`;
  const weeks = days / 7;
  if (weeks < 10) return `about one false alarm per ${Math.round(weeks)} weeks`;
  return `about one false alarm per ${Math.round(days / 30.44)} months`;
}
