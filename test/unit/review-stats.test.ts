import { describe, expect, it } from 'vitest';
import { capability, cpInterval, cpkInterval } from '../../server/stats/capability.js';
import { chiSquareQuantile, normalQuantile, studentTQuantile } from '../../server/stats/distributions.js';
import { averageSystemPosition, lowestTarget } from '../../server/stats/net-quantity.js';
import { fTest, welchTest } from '../../server/stats/two-sample.js';
import jStat from 'jstat';

describe('capability intervals', () => {
  it('when Ĉpk = 1.15 from 45 values, then Bissell’s 95 % interval is 0.89 to 1.41', () => {
    // source: Quality Digest, May 2000, "Last Word" worked example (CHECK-VALUES.md)
    const [lo, hi] = cpkInterval(1.15, 45);
    expect(lo).toBeCloseTo(0.89, 2);
    expect(hi).toBeCloseTo(1.41, 2);
  });

  it('when Ĉpk = 1.33 from 20 values, then the interval is 0.88 to 1.78', () => {
    // source: Montgomery, Introduction to SQC, capability chapter (from memory; CHECK-VALUES.md)
    const [lo, hi] = cpkInterval(1.33, 20);
    expect(lo).toBeCloseTo(0.88, 2);
    expect(hi).toBeCloseTo(1.78, 2);
  });

  it('when s = 1.75 from 20 values and the limits are 38 and 62, then Ĉp = 2.29 with 95 % interval 1.57 to 3.01', () => {
    // source: Montgomery, Introduction to SQC, capability chapter (from memory; CHECK-VALUES.md)
    const r = capability(50, 1.75, 20, 19, 38, 62);
    expect(r.cp?.value).toBeCloseTo(2.29, 2);
    // what capability() itself returns, from the unrounded Ĉp = 2.2857: the book's interval to its rounding
    expect(Math.abs((r.cp?.ci95[0] ?? 0) - 1.57)).toBeLessThan(0.01);
    expect(Math.abs((r.cp?.ci95[1] ?? 0) - 3.01)).toBeLessThan(0.01);
    // the book carries Ĉp = 2.29, rounded, into the interval
    const [lo, hi] = cpInterval(2.29, 19);
    expect(lo).toBeCloseTo(1.57, 2);
    expect(hi).toBeCloseTo(3.01, 2);
  });

  it('when the intervals are recomputed independently from the formulas, then they agree', () => {
    // independent: jstat called directly in the test, the formulas written out again
    const cp = 1.4;
    const df = 57;
    const chi = (p: number) => (jStat as unknown as { chisquare: { inv(p: number, df: number): number } }).chisquare.inv(p, df);
    const [lo, hi] = cpInterval(cp, df);
    expect(lo).toBeCloseTo(cp * Math.sqrt(chi(0.025) / df), 12);
    expect(hi).toBeCloseTo(cp * Math.sqrt(chi(0.975) / df), 12);
    expect(chiSquareQuantile(0.975, 19)).toBeCloseTo(32.852, 3); // source: NIST/SEMATECH e-Handbook §1.3.6.7.4, χ² upper 0.025, ν = 19
    const z = normalQuantile(0.975);
    const [a, b] = cpkInterval(1.0, 100);
    expect(b - a).toBeCloseTo(2 * z * Math.sqrt(1 / 900 + 1 / 198), 12);
  });

  it('when only a lower limit is given, then Cpk is one-sided and Cp is null with the reason', () => {
    const r = capability(503, 2, 200, 160, 485, null);
    expect(r.cpk.value).toBeCloseTo((503 - 485) / 6, 12);
    expect(r.cp).toBeNull();
    expect(r.unavailable.cp).toMatch(/both/);
  });
});

describe('two-period comparison', () => {
  // source: NIST/SEMATECH e-Handbook §1.3.5.3 (two-sample t-test, AUTO83B mpg: US n = 249, mean 20.14458,
  // sd 6.41470; Japan n = 79, mean 30.48101, sd 6.10771; unequal variances T = −12.94627, df = 136.8750;
  // from memory) and §1.3.5.9 (F-test on the same data: F = 1.1030, equal variances not rejected at α = 0.05; from memory)
  const us = { n: 249, mean: 20.14458, sd: 6.4147 };
  const japan = { n: 79, mean: 30.48101, sd: 6.10771 };

  it('when Welch’s t compares the two samples, then t and df match the handbook', () => {
    const r = welchTest(us, japan);
    expect(r.t).toBeCloseTo(-12.94627, 3);
    expect(r.df).toBeCloseTo(136.875, 2);
    expect(r.p).toBeLessThan(1e-20);
    const half = studentTQuantile(0.975, r.df) * Math.sqrt(us.sd ** 2 / us.n + japan.sd ** 2 / japan.n);
    expect(r.ci95[0]).toBeCloseTo(r.difference - half, 10);
    expect(r.ci95[1]).toBeCloseTo(r.difference + half, 10);
  });

  it('when the F-test compares their spreads, then F = 1.1030, inside the critical values, so not significant', () => {
    const r = fTest(us, japan);
    expect(r.f).toBeCloseTo(1.103, 3);
    expect([r.df1, r.df2]).toEqual([248, 78]);
    // the p-value agrees with the F quantiles taken from jstat directly: F lies between the 2.5 % and 97.5 % points
    const inv = (p: number, a: number, b: number) => (jStat as unknown as { centralF: { inv(p: number, a: number, b: number): number } }).centralF.inv(p, a, b);
    expect(r.f).toBeGreaterThan(inv(0.025, 248, 78));
    expect(r.f).toBeLessThan(inv(0.975, 248, 78));
    // and the quantiles obey F_α(d₁, d₂) = 1/F_{1−α}(d₂, d₁)
    expect(inv(0.025, 248, 78)).toBeCloseTo(1 / inv(0.975, 78, 248), 10);
    expect(r.p).toBeGreaterThan(0.05);
  });
});

describe('net-quantity position', () => {
  const nominal = 500;
  const t1 = 485;
  const t2 = 470;
  it('when exactly 2.5 % of packs are below T1, then the T1 rule is met; one more pack and it is not', () => {
    // 200 packs: 5 below T1 is 2.5 % (at the allowance); 6 is 3 % (common practice, no source: the 2.5 % boundary is inclusive)
    const packs = [...Array.from({ length: 195 }, () => 505), ...Array.from({ length: 5 }, () => 480)];
    const at = averageSystemPosition(packs, nominal, t1, t2, 504.375, null);
    expect(at.shareBelowT1).toBeCloseTo(0.025, 12);
    expect(at.meetsT1).toBe(true);
    const over = averageSystemPosition([...packs.slice(1), 480], nominal, t1, t2, 504.25, null);
    expect(over.shareBelowT1).toBeCloseTo(0.03, 12);
    expect(over.meetsT1).toBe(false);
  });

  it('when the fitted normal is used, then the estimated share is Φ((T1 − x̄)/s)', () => {
    // hand-worked: x̄ = 500, s = 7.65 → z = −1.9608 → Φ = 0.02495 (just within 2.5 %)
    const packs = [500];
    const r = averageSystemPosition(packs, nominal, t1, t2, 500, 7.65);
    expect(r.estimatedShareBelowT1).toBeCloseTo(0.02495, 4);
    expect(r.meetsT1Estimated).toBe(true);
    expect(averageSystemPosition(packs, nominal, t1, t2, 500, 7.7).meetsT1Estimated).toBe(false);
  });

  it('when one pack is below T2 or the mean is below Qn, then those rules are not met', () => {
    const r = averageSystemPosition([505, 469.9, 506], nominal, t1, t2, 493.6, 20);
    expect(r.belowT2).toBe(1);
    expect(r.meetsT2).toBe(false);
    expect(r.meetsMean).toBe(false);
    expect(r.meetsAll).toBe(false);
  });

  it('when σ is 2 g on a 500 g pack, then the lowest target is max(500, 485 + 3.92, 470 + 7.44) = 500', () => {
    // hand-worked: T1 + 1.96σ = 488.92, T2 + 3.72σ = 477.44, so the nominal itself binds
    expect(lowestTarget(500, 485, 470, 2)).toBe(500);
    // σ = 9 g: T1 + 17.64 = 502.64 binds (T2 + 33.48 = 503.48 binds harder)
    expect(lowestTarget(500, 485, 470, 9)).toBeCloseTo(503.48, 10);
  });
});
