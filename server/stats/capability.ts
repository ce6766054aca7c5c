import { c4, d2, d3 } from './chart-constants.js';
import type { SigmaMethod } from './control-limits.js';
import { chiSquareQuantile, normalQuantile, studentTQuantile } from './distributions.js';

export interface CapabilityIndex {
  value: number;
  ci95: [number, number];
}

export interface CapabilityResult {
  /** (USL − LSL)/6σ: needs both limits. */
  cp: CapabilityIndex | null;
  /** min(USL − μ, μ − LSL)/3σ, or the one side given. */
  cpk: CapabilityIndex;
  unavailable: { cp?: string };
}

/** Cp = (USL − LSL)/(6σ) (Montgomery, SQC §8.3). */
export function cpValue(lsl: number, usl: number, sigma: number): number {
  return (usl - lsl) / (6 * sigma);
}

/** Cpk = min(USL − μ, μ − LSL)/(3σ), one-sided when only one limit is given (Montgomery, SQC §8.3.3). */
export function cpkValue(mean: number, sigma: number, lsl: number | null, usl: number | null): number {
  const sides: number[] = [];
  if (lsl !== null) sides.push((mean - lsl) / (3 * sigma));
  if (usl !== null) sides.push((usl - mean) / (3 * sigma));
  if (sides.length === 0) throw new RangeError('Cpk needs at least one specification limit');
  return Math.min(...sides);
}

/** 95 % interval for Cp (or Pp) from the chi-square distribution of s²: Ĉp·√(χ²_{α/2,ν}/ν) to Ĉp·√(χ²_{1−α/2,ν}/ν) (Montgomery, SQC §8.3.5). */
export function cpInterval(cp: number, df: number, confidence = 0.95): [number, number] {
  const a = 1 - confidence;
  return [cp * Math.sqrt(chiSquareQuantile(a / 2, df) / df), cp * Math.sqrt(chiSquareQuantile(1 - a / 2, df) / df)];
}

/** Bissell's (1990, Applied Statistics 39(3)) normal approximation: Ĉpk ± z_{1−α/2}·√(1/(9n) + Ĉpk²/(2(n−1))). */
export function cpkInterval(cpk: number, n: number, confidence = 0.95): [number, number] {
  const z = normalQuantile(1 - (1 - confidence) / 2);
  const half = z * Math.sqrt(1 / (9 * n) + (cpk * cpk) / (2 * (n - 1)));
  return [cpk - half, cpk + half];
}

/**
 * Capability indices with their 95 % intervals for a σ and the sample size and degrees of freedom it
 * rests on: within-subgroup σ gives Cp/Cpk, the overall s of all packs gives Pp/Ppk.
 */
export function capability(mean: number, sigma: number, n: number, df: number, lsl: number | null, usl: number | null): CapabilityResult {
  const cpk = cpkValue(mean, sigma, lsl, usl);
  const result: CapabilityResult = { cp: null, cpk: { value: cpk, ci95: cpkInterval(cpk, n) }, unavailable: {} };
  if (lsl !== null && usl !== null) {
    const cp = cpValue(lsl, usl, sigma);
    result.cp = { value: cp, ci95: cpInterval(cp, df) };
  } else {
    result.unavailable.cp = 'needs both a lower and an upper specification limit';
  }
  return result;
}

/**
 * Where the σ of an index comes from, and so how uncertain it is: estimated with ν (effective) degrees
 * of freedom — from the range's own packs or from an approved baseline — or known (configured, or set
 * from a standard), when only the mean is uncertain.
 */
export type SigmaUncertainty = { kind: 'estimated'; df: number } | { kind: 'known' };

/**
 * Effective degrees of freedom of a σ estimate by Patnaik's (1950, Biometrika 37) two-moment match to a
 * scaled chi: ν = 1/(2·Var(σ̂)/σ²). R̄/d2 averaged per check: Var/σ² = Σ(d3ᵢ/d2ᵢ)²/k²; s̄/c4:
 * Σ(1−c4ᵢ²)/c4ᵢ²/k²; pooled s: Σ(nᵢ−1) exactly; MR̄/d2(2) of k individuals: the moving ranges' relative
 * variance (1−2/π)/(2/π) with their lag-one correlation, about 0.62(k−1) (Cryer & Ryan 1990, JQT 22).
 */
export function sigmaDegreesOfFreedom(method: SigmaMethod, checkSizes: readonly number[]): number {
  if (method === 'pooled') return checkSizes.reduce((acc, n) => acc + Math.max(0, n - 1), 0);
  if (method === 'mrbar') {
    const m = checkSizes.length - 1;
    if (m < 1) throw new RangeError('a moving range needs at least two checks');
    const relVar = (1 - 2 / Math.PI) / (2 / Math.PI);
    return 1 / (2 * relVar * ((m + 2 * (m - 1) * MOVING_RANGE_LAG_ONE_CORRELATION) / (m * m)));
  }
  const sizes = checkSizes.filter((n) => n >= 2);
  if (sizes.length === 0) throw new RangeError('this estimator needs checks of at least two packs');
  let relVar = 0;
  for (const n of sizes) {
    const k = Math.min(n, 25);
    relVar += method === 'rbar' ? (d3(k) / d2(k)) ** 2 : (1 - c4(n) ** 2) / c4(n) ** 2;
  }
  return 1 / (2 * (relVar / (sizes.length * sizes.length)));
}

/**
 * corr(|U|, |V|) for standard normals with correlation ρ = −½ (two moving ranges sharing a point):
 * E|U||V| = (2/π)(√(1−ρ²) + ρ·asin ρ) (the bivariate normal's absolute moments; Kamat 1953, Biometrika 40).
 */
const MOVING_RANGE_LAG_ONE_CORRELATION = (() => {
  const rho = -0.5;
  const product = (2 / Math.PI) * (Math.sqrt(1 - rho * rho) + rho * Math.asin(rho));
  return (product - 2 / Math.PI) / (1 - 2 / Math.PI);
})();

/**
 * 95 % interval for Cpk when σ and the mean come from different places, by the delta method behind
 * Bissell (1990): Var(Ĉpk) ≈ Var(x̄)/(9σ²) + Cpk²/(2ν), where ν is σ̂'s (effective) degrees of freedom
 * and the second term vanishes for a known σ. With x̄ and σ̂ from one sample of n, Var(x̄)/σ² = 1/n and
 * ν = n − 1, which is Bissell's interval. For a known σ the interval is the mean's own, (x̄ ± t·SE − LSL)/3σ,
 * with Student's t on `meanDf` when the mean's variance is itself estimated (from k check means: k − 1).
 */
export function cpkIntervalFromSources(cpk: number, meanVarianceOverSigma2: number, sigma: SigmaUncertainty, meanDf: number | null = null, confidence = 0.95): [number, number] {
  const upper = 1 - (1 - confidence) / 2;
  const z = sigma.kind === 'known' && meanDf !== null ? studentTQuantile(upper, meanDf) : normalQuantile(upper);
  const sigmaTerm = sigma.kind === 'known' ? 0 : (cpk * cpk) / (2 * sigma.df);
  const half = z * Math.sqrt(meanVarianceOverSigma2 / 9 + sigmaTerm);
  return [cpk - half, cpk + half];
}

/**
 * Capability against a σ whose uncertainty is given: Cp by the chi-square interval with σ̂'s ν (no
 * width for a known σ, as Cp holds no mean), Cpk by {@link cpkIntervalFromSources}.
 * `meanVariance` is the variance of the estimated mean with its degrees of freedom (from the check means,
 * so that packs clustered within checks do not make it look better known than it is; df null when known).
 */
export function capabilityFromSources(
  mean: number,
  sigma: number,
  meanVariance: { value: number; df: number | null },
  uncertainty: SigmaUncertainty,
  lsl: number | null,
  usl: number | null,
): CapabilityResult {
  const cpk = cpkValue(mean, sigma, lsl, usl);
  const result: CapabilityResult = { cp: null, cpk: { value: cpk, ci95: cpkIntervalFromSources(cpk, meanVariance.value / (sigma * sigma), uncertainty, meanVariance.df) }, unavailable: {} };
  if (lsl !== null && usl !== null) {
    const cp = cpValue(lsl, usl, sigma);
    result.cp = { value: cp, ci95: uncertainty.kind === 'known' ? [cp, cp] : cpInterval(cp, uncertainty.df) };
  } else {
    result.unavailable.cp = 'needs both a lower and an upper specification limit';
  }
  return result;
}

/** Variance of the grand mean of k check means, estimated from their spread: s²(x̄ᵢ)/k (the clustered-sample variance of a mean; Cochran, Sampling Techniques §9.2). */
export function varianceOfMeanFromChecks(checkMeans: readonly number[]): number | null {
  const k = checkMeans.length;
  if (k < 2) return null;
  const m = checkMeans.reduce((a, b) => a + b, 0) / k;
  const ss = checkMeans.reduce((acc, x) => acc + (x - m) ** 2, 0);
  return ss / (k - 1) / k;
}
