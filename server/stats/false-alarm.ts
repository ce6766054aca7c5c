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

/**
 * Average run length of a rule set by seeded Monte Carlo simulation of in-control (or shifted) points
 * run through the same judging code the server uses (method as in Champ & Woodall 1987 §4 checks).
 */
export function simulateArl(set: RuleSet, options: ArlOptions): ArlEstimate {
  const normal = normalGenerator(mulberry32(options.seed));
  const n = options.subgroupSize ?? 0;
  const spreadLimits = n >= 2 ? spreadChartLimits(1, n) : null;
  const shift = options.shift ?? 0;
  const packs = new Array<number>(Math.max(n, 1));
  let sum = 0;
  let sumSq = 0;
  let censored = 0;
  for (let run = 0; run < options.runs; run += 1) {
    let state = freshSegment();
    let length = 0;
    for (;;) {
      length += 1;
      let point: JudgedPoint;
      if (spreadLimits) {
        for (let i = 0; i < n; i += 1) packs[i] = normal();
        let m = 0;
        for (let i = 0; i < n; i += 1) m += packs[i] as number;
        m /= n;
        const spreadValue = spreadLimits.chart === 'S' ? (sampleSd(packs) as number) : range(packs);
        point = { z: m * Math.sqrt(n) + shift, spread: { value: spreadValue, ucl: spreadLimits.ucl } };
      } else {
        point = { z: normal() + shift, spread: null };
      }
      const judged = judgePoint(set, state, point);
      state = judged.state;
      if (judged.signals.length > 0) break;
      if (length >= options.maxLength) {
        censored += 1;
        break;
      }
    }
    sum += length;
    sumSq += length * length;
  }
  const arl = sum / options.runs;
  const variance = Math.max(0, sumSq / options.runs - arl * arl);
  return { arl, standardError: Math.sqrt(variance / options.runs), runs: options.runs, censored };
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
