import { fCdf, studentTQuantile, studentTTwoSidedP } from './distributions.js';

export interface SampleMoments {
  n: number;
  mean: number;
  sd: number;
}

export interface WelchResult {
  difference: number;
  t: number;
  df: number;
  p: number;
  ci95: [number, number];
}

/** Welch's two-sample t for unequal variances with the Welch–Satterthwaite df (NIST/SEMATECH e-Handbook §1.3.5.3). */
export function welchTest(a: SampleMoments, b: SampleMoments): WelchResult {
  const va = (a.sd * a.sd) / a.n;
  const vb = (b.sd * b.sd) / b.n;
  const se = Math.sqrt(va + vb);
  const difference = a.mean - b.mean;
  const t = difference / se;
  const df = (va + vb) ** 2 / ((va * va) / (a.n - 1) + (vb * vb) / (b.n - 1));
  const half = studentTQuantile(0.975, df) * se;
  return { difference, t, df, p: studentTTwoSidedP(t, df), ci95: [difference - half, difference + half] };
}

export interface FTestResult {
  f: number;
  df1: number;
  df2: number;
  p: number;
}

/** F-test of equal variances, F = s₁²/s₂², two-sided p = 2·min(F_cdf, 1 − F_cdf) (NIST/SEMATECH e-Handbook §1.3.5.9). */
export function fTest(a: SampleMoments, b: SampleMoments): FTestResult {
  const f = (a.sd * a.sd) / (b.sd * b.sd);
  const df1 = a.n - 1;
  const df2 = b.n - 1;
  const lower = fCdf(f, df1, df2);
  return { f, df1, df2, p: Math.min(1, 2 * Math.min(lower, 1 - lower)) };
}
