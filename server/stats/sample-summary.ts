import { mean, range, sampleSd } from './descriptive.js';
import { studentTQuantile, studentTTwoSidedP } from './distributions.js';

/** Why a statistic is missing; the API shows it beside the null. */
export type Unavailable = Partial<Record<'sd' | 'se' | 't' | 'p' | 'ci95', string>>;

export interface Inference {
  se: number | null;
  t: number | null;
  df: number | null;
  p: number | null;
  ci95: [number, number] | null;
  unavailable: Unavailable;
}

export interface SampleSummary extends Inference {
  n: number;
  mean: number;
  sd: number | null;
  range: number;
}

const ONE_VALUE = 'one value only: a spread needs at least two';
const NO_SPREAD = 'all values equal: the standard error is zero, so t is undefined';

/**
 * Standard error s/√n, one-sample Student t = (x̄ − target)/SE with df = n − 1, its two-sided p and the
 * 95 % interval x̄ ± t_{0.975,n−1}·SE (NIST/SEMATECH e-Handbook §1.3.5.2 and §7.2.2).
 */
export function inferFromMoments(n: number, m: number, sd: number | null, target: number): Inference {
  if (sd === null || n < 2) {
    return { se: null, t: null, df: null, p: null, ci95: null, unavailable: { sd: ONE_VALUE, se: ONE_VALUE, t: ONE_VALUE, p: ONE_VALUE, ci95: ONE_VALUE } };
  }
  const se = sd / Math.sqrt(n);
  const df = n - 1;
  const half = studentTQuantile(0.975, df) * se;
  if (se === 0) {
    return { se, t: null, df, p: null, ci95: [m, m], unavailable: { t: NO_SPREAD, p: NO_SPREAD } };
  }
  const t = (m - target) / se;
  return { se, t, df, p: studentTTwoSidedP(t, df), ci95: [m - half, m + half], unavailable: {} };
}

/** n, mean, sd (two-pass), range and the one-sample inference against a target, for one sample. */
export function summarizeSample(values: readonly number[], target: number): SampleSummary {
  const m = mean(values);
  const sd = sampleSd(values);
  return { n: values.length, mean: m, sd, range: range(values), ...inferFromMoments(values.length, m, sd, target) };
}
