/**
 * Small-shift detectors on standardised means zᵢ (each N(0, 1) while in control): EWMA with exact
 * time-varying limits (Roberts 1959; Lucas & Saccucci, Technometrics 32(1) 1990) and the two-sided
 * tabular CUSUM (Page 1954; Montgomery, SQC, CUSUM chapter). State is plain data so it can be stored.
 */

export interface EwmaParameters {
  lambda: number;
  L: number;
}

export interface EwmaState {
  value: number;
  count: number;
  /** Index (in the segment) of the first point of the current excursion to one side of centre. */
  excursionStart: number;
}

export interface EwmaStep {
  state: EwmaState;
  limit: number;
  signal: 'up' | 'down' | null;
}

export const EWMA_START: EwmaState = { value: 0, count: 0, excursionStart: 0 };

/** Half-width of the EWMA limits after i points: L·√(λ/(2−λ)·(1−(1−λ)^{2i})) (Lucas & Saccucci 1990, eq. 2). */
export function ewmaLimit(params: EwmaParameters, i: number): number {
  const { lambda, L } = params;
  return L * Math.sqrt((lambda / (2 - lambda)) * (1 - (1 - lambda) ** (2 * i)));
}

/** One EWMA update wᵢ = λzᵢ + (1−λ)wᵢ₋₁ with w₀ = 0, judged against the exact limit for point i (Roberts 1959). */
export function ewmaStep(params: EwmaParameters, state: EwmaState, z: number, index: number): EwmaStep {
  const value = params.lambda * z + (1 - params.lambda) * state.value;
  const count = state.count + 1;
  const limit = ewmaLimit(params, count);
  const sameSide = Math.sign(value) !== 0 && Math.sign(value) === Math.sign(state.value);
  const excursionStart = sameSide ? state.excursionStart : index;
  const signal = value > limit ? 'up' : value < -limit ? 'down' : null;
  return { state: { value, count, excursionStart }, limit, signal };
}

export interface CusumParameters {
  k: number;
  h: number;
}

export interface CusumState {
  upper: number;
  lower: number;
  /** Index of the last point at which each side was zero (−1: at the segment start, before any point). */
  upperZeroAt: number;
  lowerZeroAt: number;
}

export interface CusumStep {
  state: CusumState;
  signal: 'up' | 'down' | null;
  /** For a signal, the index of the last point at which that side was zero. */
  lastZeroAt: number | null;
}

export const CUSUM_START: CusumState = { upper: 0, lower: 0, upperZeroAt: -1, lowerZeroAt: -1 };

/** Tabular CUSUM C⁺ᵢ = max(0, zᵢ − k + C⁺ᵢ₋₁), C⁻ᵢ = max(0, −zᵢ − k + C⁻ᵢ₋₁), signal when above h (Montgomery, SQC, eq. 9.2–9.3). */
export function cusumStep(params: CusumParameters, state: CusumState, z: number, index: number): CusumStep {
  const upper = Math.max(0, z - params.k + state.upper);
  const lower = Math.max(0, -z - params.k + state.lower);
  const next: CusumState = {
    upper,
    lower,
    upperZeroAt: upper === 0 ? index : state.upperZeroAt,
    lowerZeroAt: lower === 0 ? index : state.lowerZeroAt,
  };
  if (upper > params.h) return { state: next, signal: 'up', lastZeroAt: next.upperZeroAt };
  if (lower > params.h) return { state: next, signal: 'down', lastZeroAt: next.lowerZeroAt };
  return { state: next, signal: null, lastZeroAt: null };
}
