import stdlibNormalCdf from '@stdlib/stats-base-dists-normal-cdf';
import jStat from 'jstat';

/**
 * Two-sided p-value of Student's t with df degrees of freedom: 2·F(−|t|), which keeps its relative
 * accuracy where 2·(1 − F(|t|)) would round to 0; far out (ν/(ν+t²) < 0.01) as I_{ν/(ν+t²)}(ν/2, ½)
 * (Abramowitz & Stegun 26.7.1 with 26.5.2), which avoids the cancellation inside F at large |t|.
 */
export function studentTTwoSidedP(t: number, df: number): number {
  const x = df / (df + t * t);
  const p = x < 0.01 ? jStat.ibeta(x, df / 2, 0.5) : 2 * jStat.studentt.cdf(-Math.abs(t), df);
  return Math.min(1, Math.max(0, p));
}

const quantiles = new Map<string, number>();

/** Upper quantile t_{1−α, df} of Student's t (jstat's inverse of the incomplete beta), remembered per (p, df): it is iterative and slow. */
export function studentTQuantile(probability: number, df: number): number {
  const key = `${probability}:${df}`;
  let q = quantiles.get(key);
  if (q === undefined) {
    q = jStat.studentt.inv(probability, df);
    if (quantiles.size < 100_000) quantiles.set(key, q);
  }
  return q;
}

/** Standard normal cumulative distribution Φ(z) = ½·erfc(−z/√2) (@stdlib, whose erfc keeps its relative accuracy far into the tails). */
export function normalCdf(z: number): number {
  return stdlibNormalCdf(z, 0, 1);
}

/** Standard normal quantile Φ⁻¹(p) (jstat). */
export function normalQuantile(p: number): number {
  return jStat.normal.inv(p, 0, 1);
}

/** Chi-square quantile with df degrees of freedom (jstat, inverse regularised gamma). */
export function chiSquareQuantile(p: number, df: number): number {
  return jStat.chisquare.inv(p, df);
}

/** Cumulative F distribution with (df1, df2) degrees of freedom (jstat). */
export function fCdf(x: number, df1: number, df2: number): number {
  return jStat.centralF.cdf(x, df1, df2);
}

/** Natural log of the gamma function (jstat, Lanczos approximation). */
export function logGamma(x: number): number {
  return jStat.gammaln(x);
}

/** Noncentral Student's t cumulative distribution F(x; ν, δ) (jstat's Poisson-weighted incomplete-beta series). */
export function noncentralTCdf(x: number, df: number, ncp: number): number {
  return jStat.noncentralt.cdf(x, df, ncp);
}
