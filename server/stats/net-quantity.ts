import { normalCdf } from './distributions.js';

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
