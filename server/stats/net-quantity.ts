import { noncentralTCdf, normalCdf, studentTQuantile } from './distributions.js';

export interface AverageSystemPosition {
  packs: number;
  mean: number;
  meetsMean: boolean;
  belowT1: number;
  shareBelowT1: number;
  /** Φ((T1 − x̄)/s): the share the fitted normal puts below T1. */
  estimatedShareBelowT1: number | null;
  /** Observed share within the allowance. */
  meetsT1: boolean;
  /** Estimated share within the allowance (null when no spread could be fitted). */
  meetsT1Estimated: boolean | null;
  belowT2: number;
  meetsT2: boolean;
  meetsAll: boolean;
}

/** The allowance for packs below T1 in the average system (Directive 76/211/EEC Annex I; UK guidance "generally no more than 2.5 %"). */
export const T1_ALLOWANCE = 0.025;

/**
 * The packer's three rules of the average system (Directive 76/211/EEC Annex I §1; OIML R 87): mean not
 * below Qn; packs below T1 within the 2.5 % allowance (observed, and as the fitted normal estimates); none below T2.
 */
export function averageSystemPosition(packs: readonly number[], nominal: number, t1: number, t2: number, mean: number, sd: number | null): AverageSystemPosition {
  const belowT1 = packs.filter((w) => w < t1).length;
  const belowT2 = packs.filter((w) => w < t2).length;
  const share = packs.length === 0 ? 0 : belowT1 / packs.length;
  const estimated = sd === null || sd === 0 ? null : normalCdf((t1 - mean) / sd);
  const meetsMean = mean >= nominal;
  const meetsT1 = share <= T1_ALLOWANCE;
  const meetsT1Estimated = estimated === null ? null : estimated <= T1_ALLOWANCE;
  const meetsT2 = belowT2 === 0;
  return {
    packs: packs.length,
    mean,
    meetsMean,
    belowT1,
    shareBelowT1: share,
    estimatedShareBelowT1: estimated,
    meetsT1,
    meetsT1Estimated,
    belowT2,
    meetsT2,
    meetsAll: meetsMean && meetsT1 && meetsT1Estimated !== false && meetsT2,
  };
}

/**
 * The lowest target fill the current σ allows: max(Qn, T1 + 1.96σ, T2 + 3.72σ), so that about 2.5 % fall
 * below T1 and about 1 in 10,000 below T2 (common practice for the average system's criteria).
 */
export function lowestTarget(nominal: number, t1: number, t2: number, sigma: number): number {
  return Math.max(nominal, t1 + 1.96 * sigma, t2 + 3.72 * sigma);
}

/** One double-sampling plan of the reference test for packs checked without opening them. */
export interface ReferenceTestPlan {
  /** Packs in each of the two samples. */
  sampleSize: number;
  /** First sample: accept at or below, reject at or above (packs below T1). */
  firstAccept: number;
  firstReject: number;
  /** Both samples together: accept at or below, reject at or above. */
  secondAccept: number;
  secondReject: number;
  /** λ = t₀.₉₉₅,ₙ₋₁/√n: the sample mean may fall λ·s below Qn and pass. */
  factor: number;
}

/**
 * The reference test's plan for a lot (the packs of one batch; at the packer's premises, at most an
 * hour's output) by Directive 76/211/EEC Annex II and UK SI 2006/659 Schedule 2: 30 + 30 for 100–500
 * packs, 50 + 50 for 501–3 200, 80 + 80 above; null below 100, where every pack is checked.
 */
export function referenceTestPlan(lotSize: number): ReferenceTestPlan | null {
  if (lotSize < 100) return null;
  const [sampleSize, firstAccept, firstReject, secondAccept, secondReject] =
    lotSize <= 500 ? [30, 1, 3, 4, 5] : lotSize <= 3200 ? [50, 2, 5, 6, 7] : [80, 3, 7, 8, 9];
  return { sampleSize, firstAccept, firstReject, secondAccept, secondReject, factor: studentTQuantile(0.995, sampleSize - 1) / Math.sqrt(sampleSize) };
}

function binomialPmf(k: number, n: number, p: number): number {
  if (p <= 0) return k === 0 ? 1 : 0;
  if (p >= 1) return k === n ? 1 : 0;
  let logC = 0;
  for (let i = 1; i <= k; i += 1) logC += Math.log((n - k + i) / i);
  return Math.exp(logC + k * Math.log(p) + (n - k) * Math.log1p(-p));
}

/** P(accept) of a double-sampling plan at a share p of packs below T1: the plan's operating characteristic (Montgomery, SQC §15.3). */
export function doublePlanAcceptance(plan: ReferenceTestPlan, p: number): number {
  const n = plan.sampleSize;
  let accept = 0;
  for (let d1 = 0; d1 <= plan.firstAccept; d1 += 1) accept += binomialPmf(d1, n, p);
  for (let d1 = plan.firstAccept + 1; d1 < plan.firstReject; d1 += 1) {
    let second = 0;
    for (let d2 = 0; d2 <= plan.secondAccept - d1; d2 += 1) second += binomialPmf(d2, n, p);
    accept += binomialPmf(d1, n, p) * second;
  }
  return accept;
}

/**
 * The chance that a lot with mean μ and pack σ passes the reference test: the mean criterion
 * x̄ ≥ Qn − λ·s, i.e. a noncentral t on n − 1 with δ = (μ − Qn)√n/σ at or above −t₀.₉₉₅ (Directive
 * 76/211/EEC Annex II §2), and the count of packs below T1 by the plan's operating characteristic.
 */
export function referenceTestPassChance(plan: ReferenceTestPlan, mu: number, sigma: number, nominal: number, t1: number): { mean: number; count: number } {
  const n = plan.sampleSize;
  const delta = ((mu - nominal) * Math.sqrt(n)) / sigma;
  const mean = 1 - noncentralTCdf(-studentTQuantile(0.995, n - 1), n - 1, delta);
  return { mean: Math.min(1, Math.max(0, mean)), count: doublePlanAcceptance(plan, normalCdf((t1 - mu) / sigma)) };
}
