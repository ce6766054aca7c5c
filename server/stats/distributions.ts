import jStat from 'jstat';

/** Two-sided p-value of Student's t with df degrees of freedom: 2·(1 − F(|t|)), F from jstat's incomplete beta. */
export function studentTTwoSidedP(t: number, df: number): number {
  const p = 2 * (1 - jStat.studentt.cdf(Math.abs(t), df));
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

/** Standard normal cumulative distribution Φ(z) (jstat, via the complementary error function). */
export function normalCdf(z: number): number {
  return jStat.normal.cdf(z, 0, 1);
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
