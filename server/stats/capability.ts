import { chiSquareQuantile, normalQuantile } from './distributions.js';

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
