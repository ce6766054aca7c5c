import { c4, chartConstants, d2 } from './chart-constants.js';

/** The process model a chart is drawn from: centre of the pack weights and σ of one pack. */
export interface ProcessModel {
  centre: number;
  sigma: number;
}

export type SigmaMethod = 'rbar' | 'sbar' | 'pooled' | 'mrbar';

export interface BaselineCheck {
  n: number;
  mean: number;
  sd: number | null;
  range: number;
}

export interface SigmaEstimate {
  centre: number;
  sigma: number;
  method: SigmaMethod;
  checks: number;
  packs: number;
  /** Mean moving range, for individuals charts (n = 1). */
  mrbar?: number;
}

export interface MeanChartLimits {
  centre: number;
  lcl: number;
  ucl: number;
  /** Boundaries at ±1σ and ±2σ of the plotted mean. */
  zone1: [number, number];
  zone2: [number, number];
  sigmaOfMean: number;
}

export interface SpreadChartLimits {
  chart: 'S' | 'R' | 'MR';
  centre: number;
  lcl: number;
  ucl: number;
}

/** Default estimator per subgroup size: s̄/c4 for n > 10, R̄/d2 for 2 ≤ n ≤ 10, MR̄/d2(2) for individuals (ASTM E2587 §8–9). */
export function defaultSigmaMethod(subgroupSize: number): SigmaMethod {
  if (subgroupSize <= 1) return 'mrbar';
  return subgroupSize > 10 ? 'sbar' : 'rbar';
}

/**
 * σ̂ and x̿ from a baseline of checks (ASTM E2587 §8–9; NIST/SEMATECH e-Handbook §6.3.2):
 * R̄/d2 and s̄/c4 averaged per check as Rᵢ/d2(nᵢ) and sᵢ/c4(nᵢ) so variable n is exact in expectation;
 * pooled s = √(Σ(nᵢ−1)sᵢ²/Σ(nᵢ−1)) / c4(Σ(nᵢ−1)+1); individuals MR̄/1.128.
 */
export function estimateSigma(baseline: readonly BaselineCheck[], method: SigmaMethod): SigmaEstimate {
  if (baseline.length < 2) throw new RangeError('a baseline needs at least two checks');
  let packs = 0;
  let weighted = 0;
  for (const c of baseline) {
    packs += c.n;
    weighted += c.n * c.mean;
  }
  const centre = weighted / packs;
  if (method === 'mrbar') {
    let sum = 0;
    for (let i = 1; i < baseline.length; i += 1) {
      sum += Math.abs((baseline[i] as BaselineCheck).mean - (baseline[i - 1] as BaselineCheck).mean);
    }
    const mrbar = sum / (baseline.length - 1);
    return { centre, sigma: mrbar / d2(2), method, checks: baseline.length, packs, mrbar };
  }
  const multi = baseline.filter((c) => c.n >= 2);
  if (multi.length === 0) throw new RangeError('this estimator needs checks of at least two packs');
  let sigma: number;
  if (method === 'rbar') {
    sigma = multi.reduce((acc, c) => acc + c.range / d2(Math.min(c.n, 25)), 0) / multi.length;
  } else if (method === 'sbar') {
    sigma = multi.reduce((acc, c) => acc + (c.sd ?? 0) / c4(c.n), 0) / multi.length;
  } else {
    let ss = 0;
    let df = 0;
    for (const c of multi) {
      ss += (c.n - 1) * (c.sd ?? 0) ** 2;
      df += c.n - 1;
    }
    sigma = Math.sqrt(ss / df) / c4(df + 1);
  }
  return { centre, sigma, method, checks: baseline.length, packs };
}

/** Mean chart for a point of n packs: centre ± 3σ/√n with zones at 1σ/√n and 2σ/√n (Shewhart; ASTM E2587 §8). */
export function meanChartLimits(model: ProcessModel, n: number): MeanChartLimits {
  const s = model.sigma / Math.sqrt(n);
  return {
    centre: model.centre,
    lcl: model.centre - 3 * s,
    ucl: model.centre + 3 * s,
    zone1: [model.centre - s, model.centre + s],
    zone2: [model.centre - 2 * s, model.centre + 2 * s],
    sigmaOfMean: s,
  };
}

/**
 * Spread chart from a known σ (ASTM E2587 §8.4; Montgomery, SQC §6.2–6.3): S chart with centre c4σ and
 * limits c4σ ± 3σ√(1−c4²); R chart for n ≤ 10 with centre d2σ and limits d2σ ± 3d3σ; moving range for
 * n = 1 with centre d2(2)σ and UCL D4(2)·d2(2)·σ = 3.267·MR̄. Lower limits are bounded at 0.
 */
export function spreadChartLimits(sigma: number, n: number, preferS = false): SpreadChartLimits {
  if (n <= 1) {
    const k = chartConstants(2);
    return { chart: 'MR', centre: k.d2 * sigma, lcl: 0, ucl: k.D4 * k.d2 * sigma };
  }
  const size = Math.min(n, 25);
  const k = chartConstants(size);
  if (n <= 10 && !preferS) {
    return { chart: 'R', centre: k.d2 * sigma, lcl: Math.max(0, (k.d2 - 3 * k.d3) * sigma), ucl: (k.d2 + 3 * k.d3) * sigma };
  }
  const c = n > 25 ? c4(n) : k.c4;
  const spread = 3 * sigma * Math.sqrt(1 - c * c);
  return { chart: 'S', centre: c * sigma, lcl: Math.max(0, c * sigma - spread), ucl: c * sigma + spread };
}

/** The standardised mean zᵢ = (x̄ᵢ − centre)/(σ/√nᵢ) that the zone rules and the small-shift detectors read. */
export function standardisedMean(mean: number, n: number, model: ProcessModel): number {
  return (mean - model.centre) / (model.sigma / Math.sqrt(n));
}
