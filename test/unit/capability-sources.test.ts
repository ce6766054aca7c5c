import { describe, expect, it } from 'vitest';
import { capabilityFromSources, cpkInterval, cpkIntervalFromSources, sigmaDegreesOfFreedom, varianceOfMeanFromChecks } from '../../server/stats/capability.js';
import { estimateSigma, type BaselineCheck, type SigmaMethod } from '../../server/stats/control-limits.js';
import { mean, sampleSd } from '../../server/stats/descriptive.js';
import { doublePlanAcceptance, referenceTestPassChance, referenceTestPlan, type ReferenceTestPlan } from '../../server/stats/net-quantity.js';
import { mulberry32, normalGenerator } from '../../server/stats/random.js';
import * as ss from 'simple-statistics';

/** Simulated checks of n packs from N(μ, σ²): property-test data only (seeded). */
function simulateChecks(normal: () => number, k: number, n: number, mu: number, sigma: number): { checks: BaselineCheck[]; packs: number[] } {
  const checks: BaselineCheck[] = [];
  const packs: number[] = [];
  for (let i = 0; i < k; i += 1) {
    const w = Array.from({ length: n }, () => mu + sigma * normal());
    packs.push(...w);
    checks.push({ n, mean: mean(w), sd: sampleSd(w), range: Math.max(...w) - Math.min(...w) });
  }
  return { checks, packs };
}

describe('degrees of freedom of a σ estimate', () => {
  it('when σ comes from R̄/d2 of k checks of n = 3..6, then ν is about 0.9·k(n − 1)', () => {
    // source: Patnaik (1950), Biometrika 37, the effective degrees of freedom of a mean range (the
    // usual rounding "ν ≈ 0.9·k(n − 1)" for small n, as quoted e.g. by Wheeler; from memory)
    for (const n of [3, 4, 5, 6]) {
      const nu = sigmaDegreesOfFreedom('rbar', Array(25).fill(n));
      expect(Math.abs(nu / (0.9 * 25 * (n - 1)) - 1), `n = ${n}`).toBeLessThan(0.03);
    }
  });

  it('when σ comes from MR̄/d2 of k individuals, then ν is about 0.62(k − 1)', () => {
    // source: Cryer & Ryan (1990), J. Quality Technology 22, the efficiency of MR̄ (from memory)
    const nu = sigmaDegreesOfFreedom('mrbar', Array(200).fill(1));
    expect(Math.abs(nu / (0.62 * 199) - 1)).toBeLessThan(0.03);
  });

  it('when σ is the pooled s, then ν is Σ(nᵢ − 1) exactly', () => {
    // source: pooled variance, Montgomery SQC §6.3 (the chi-square of Σ(nᵢ−1)s²ᵢ/σ²)
    expect(sigmaDegreesOfFreedom('pooled', [5, 5, 4, 3])).toBe(13);
  });

  it.each<[SigmaMethod, number]>([
    ['rbar', 5],
    ['sbar', 12],
    ['pooled', 5],
    ['mrbar', 1],
  ])('when %s estimates of σ (n = %i) are simulated, then their relative variance is 1/(2ν) within 6 %%', (method, n) => {
    // independent: a seeded Monte Carlo of σ̂ against the moment formula (property test)
    const normal = normalGenerator(mulberry32(7 + n));
    const k = n === 1 ? 60 : 20;
    const estimates = Array.from({ length: 4000 }, () => estimateSigma(simulateChecks(normal, k, n, 0, 1).checks, method).sigma);
    const m = mean(estimates);
    const relVar = (sampleSd(estimates) as number) ** 2 / (m * m);
    const nu = sigmaDegreesOfFreedom(method, Array(k).fill(n));
    expect(Math.abs(relVar * 2 * nu - 1)).toBeLessThan(0.06);
  });
});

describe('Cpk intervals that follow the source of σ', () => {
  it('when x̄ and σ̂ come from one sample of n, then the interval is Bissell’s', () => {
    // source: Bissell (1990), Applied Statistics 39(3); Quality Digest, May 2000, n = 45, Ĉpk = 1.15 → 0.89 to 1.41
    const [lo, hi] = cpkIntervalFromSources(1.15, 1 / 45, { kind: 'estimated', df: 44 });
    expect(lo).toBeCloseTo(0.89, 2);
    expect(hi).toBeCloseTo(1.41, 2);
    expect([lo, hi]).toEqual(cpkInterval(1.15, 45));
  });

  it('when σ is known, then Cp has no width and Cpk only the mean’s: z·SE(x̄)/(3σ)', () => {
    // source: the delta method with σ fixed (Kotz & Johnson, Process Capability Indices, 1993, §3)
    const known = capabilityFromSources(503, 2, { value: 4 / 600, df: null }, { kind: 'known' }, 490, 520);
    expect(known.cp?.ci95[1]).toBe(known.cp?.ci95[0]);
    expect((known.cpk.ci95[1] - known.cpk.ci95[0]) / 2).toBeCloseTo((1.959964 * Math.sqrt(4 / 600)) / (3 * 2), 5);
    // the mean's variance estimated from 40 check means: Student's t on 39 df, t₀.₉₇₅,₃₉ = 2.0227 (Student's t table)
    const fromChecks = capabilityFromSources(503, 2, { value: 4 / 600, df: 39 }, { kind: 'known' }, 490, 520);
    expect((fromChecks.cpk.ci95[1] - fromChecks.cpk.ci95[0]) / 2).toBeCloseTo((2.0227 * Math.sqrt(4 / 600)) / (3 * 2), 4);
  });

  it('when the check means are spread more than their packs explain, then the mean is taken as less certain', () => {
    // common practice, no source: a clustered sample's mean is judged by its clusters
    expect(varianceOfMeanFromChecks([500, 502, 504, 506])).toBeCloseTo(((500 - 503) ** 2 + 1 + 1 + 9) / 3 / 4, 10);
    expect(varianceOfMeanFromChecks([500])).toBeNull();
  });

  // The 95 % interval should cover the true Cpk in 95 ± 1 % of 2,000 simulated weeks for each source
  // of σ (a seeded property test): a week of 40 checks of 5 packs, true μ = 505, σ = 2, LSL = 496,
  // USL = 520 (true Cpk = 1.5, Cp = 2).
  const LSL = 496;
  const USL = 520;
  const TRUE_CPK = (505 - LSL) / 6;
  const TRUE_CP = (USL - LSL) / 12;
  const WEEKS = 2000;

  function coverage(source: 'this range' | 'approved baseline' | 'configured' | 'all packs', seed: number) {
    const normal = normalGenerator(mulberry32(seed));
    let cpkHits = 0;
    let cpHits = 0;
    for (let w = 0; w < WEEKS; w += 1) {
      const week = simulateChecks(normal, 40, 5, 505, 2);
      const grand = mean(week.packs);
      const meanVar = { value: varianceOfMeanFromChecks(week.checks.map((c) => c.mean)) as number, df: week.checks.length - 1 };
      let r: ReturnType<typeof capabilityFromSources>;
      if (source === 'this range') {
        const est = estimateSigma(week.checks, 'rbar');
        r = capabilityFromSources(grand, est.sigma, meanVar, { kind: 'estimated', df: sigmaDegreesOfFreedom('rbar', Array(40).fill(5)) }, LSL, USL);
      } else if (source === 'approved baseline') {
        const baseline = simulateChecks(normal, 25, 5, 505, 2);
        const est = estimateSigma(baseline.checks, 'rbar');
        r = capabilityFromSources(grand, est.sigma, meanVar, { kind: 'estimated', df: sigmaDegreesOfFreedom('rbar', Array(25).fill(5)) }, LSL, USL);
      } else if (source === 'configured') {
        r = capabilityFromSources(grand, 2, meanVar, { kind: 'known' }, LSL, USL);
      } else {
        const s = sampleSd(week.packs) as number;
        r = capabilityFromSources(grand, s, { value: (s * s) / week.packs.length, df: null }, { kind: 'estimated', df: week.packs.length - 1 }, LSL, USL);
      }
      if (r.cpk.ci95[0] <= TRUE_CPK && TRUE_CPK <= r.cpk.ci95[1]) cpkHits += 1;
      const cp = r.cp?.ci95 as [number, number];
      if (cp[0] <= TRUE_CP && TRUE_CP <= cp[1]) cpHits += 1;
    }
    return { cpk: cpkHits / WEEKS, cp: cpHits / WEEKS };
  }

  // With 2,000 weeks a coverage's own sampling error is 0.49 %, so ±1 % is about two standard errors;
  // the seeds are fixed (one per source, in order) so that the run is reproducible. A 20,000-week run
  // of "this range" gave 94.9 % with either estimate of the mean's variance.
  it.each([
    { source: 'this range', seed: 1 },
    { source: 'approved baseline', seed: 2 },
    { source: 'configured', seed: 3 },
    { source: 'all packs', seed: 4 },
  ] as const)('when σ comes from $source, then the 95 % Cpk interval covers the true Cpk in 95 ± 1 % of 2,000 weeks', ({ source, seed }) => {
    const c = coverage(source, seed);
    expect(Math.abs(c.cpk - 0.95), `Cpk coverage ${c.cpk}`).toBeLessThanOrEqual(0.01);
  });

  it.each([
    { source: 'this range', seed: 5 },
    { source: 'approved baseline', seed: 6 },
    { source: 'all packs', seed: 7 },
  ] as const)('when σ comes from $source, then the 95 % Cp interval covers the true Cp in 95 ± 1 % of 2,000 weeks', ({ source, seed }) => {
    const c = coverage(source, seed);
    expect(Math.abs(c.cp - 0.95), `Cp coverage ${c.cp}`).toBeLessThanOrEqual(0.01);
  });
});

describe('the reference test at the advised target', () => {
  it('when the plan is looked up by lot size, then its samples, counts and mean factor are the published ones', () => {
    // source: Directive 76/211/EEC Annex II; UK SI 2006/659 Schedule 2 (CHECK-VALUES.md): factors 0.503 (n = 30), 0.379 (n = 50)
    expect(referenceTestPlan(99)).toBeNull();
    const small = referenceTestPlan(300) as ReferenceTestPlan;
    expect([small.sampleSize, small.firstAccept, small.firstReject, small.secondAccept, small.secondReject]).toEqual([30, 1, 3, 4, 5]);
    expect(small.factor).toBeCloseTo(0.503, 3);
    const middle = referenceTestPlan(1000) as ReferenceTestPlan;
    expect([middle.sampleSize, middle.firstAccept, middle.firstReject, middle.secondAccept, middle.secondReject]).toEqual([50, 2, 5, 6, 7]);
    expect(middle.factor).toBeCloseTo(0.379, 3);
    const large = referenceTestPlan(5000) as ReferenceTestPlan;
    expect([large.sampleSize, large.firstAccept, large.firstReject, large.secondAccept, large.secondReject]).toEqual([80, 3, 7, 8, 9]);
  });

  it('when the mean sits at Qn, then the mean criterion passes 99.5 % of lots, and its chance elsewhere matches the noncentral t', () => {
    // source: the criterion's design, t₀.₉₉₅ (Directive Annex II §2); away from Qn, values from scipy 1.17.1
    // stats.nct: 1 − nct.cdf(−t₀.₉₉₅,₄₉, 49, 1.0) = 0.99980223; 1 − nct.cdf(−t₀.₉₉₅,₂₉, 29, −1.5) = 0.87698282
    const plan50 = referenceTestPlan(1000) as ReferenceTestPlan;
    expect(referenceTestPassChance(plan50, 500, 2, 500, 485).mean).toBeCloseTo(0.995, 5);
    expect(referenceTestPassChance(plan50, 500 + 2 / Math.sqrt(50), 2, 500, 485).mean).toBeCloseTo(0.99980223, 5);
    const plan30 = referenceTestPlan(300) as ReferenceTestPlan;
    expect(referenceTestPassChance(plan30, 500 - 1.5 * (2 / Math.sqrt(30)), 2, 500, 485).mean).toBeCloseTo(0.87698282, 4);
  });

  it('when 2.5 % of packs fall below T1, then the 50 + 50 plan accepts the lot with the chance its operating characteristic gives', () => {
    // worked by hand from the binomial (Montgomery SQC §15.3, double sampling): P(d₁ ≤ 2) + P(d₁ = 3)·P(d₂ ≤ 3) + P(d₁ = 4)·P(d₂ ≤ 2)
    const b = (k: number, n: number, p: number) => ss.combinations(Array.from({ length: n }, (_, i) => i), k).length * p ** k * (1 - p) ** (n - k);
    const p = 0.025;
    const upTo = (k: number) => Array.from({ length: k + 1 }, (_, i) => b(i, 50, p)).reduce((a, c) => a + c, 0);
    const expected = upTo(2) + b(3, 50, p) * upTo(3) + b(4, 50, p) * upTo(2);
    expect(doublePlanAcceptance(referenceTestPlan(1000) as ReferenceTestPlan, p)).toBeCloseTo(expected, 10);
    expect(doublePlanAcceptance(referenceTestPlan(1000) as ReferenceTestPlan, 0)).toBe(1);
  });

  it('when the inspector’s reference test is simulated on lots, then its pass chance matches the computed one', () => {
    // independent: a seeded Monte Carlo of the inspector's test (both criteria as written in the Directive)
    const plan = referenceTestPlan(1000) as ReferenceTestPlan;
    const normal = normalGenerator(mulberry32(31));
    // a mean a little under Qn and a T1 close enough that both criteria fail now and then
    const mu = 499.6;
    const sigma = 2;
    const t1 = 496.2;
    let passMean = 0;
    let passCount = 0;
    const lots = 20_000;
    for (let i = 0; i < lots; i += 1) {
      const first = Array.from({ length: 50 }, () => mu + sigma * normal());
      const second = Array.from({ length: 50 }, () => mu + sigma * normal());
      if (mean(first) >= 500 - plan.factor * (sampleSd(first) as number)) passMean += 1;
      const d1 = first.filter((w) => w < t1).length;
      const d2 = second.filter((w) => w < t1).length;
      if (d1 <= 2 || (d1 < 5 && d1 + d2 <= 6)) passCount += 1;
    }
    const chance = referenceTestPassChance(plan, mu, sigma, 500, t1);
    expect(chance.mean).toBeGreaterThan(0.5);
    expect(chance.mean).toBeLessThan(0.99);
    expect(chance.count).toBeLessThan(0.99);
    expect(Math.abs(passMean / lots - chance.mean)).toBeLessThan(0.01);
    expect(Math.abs(passCount / lots - chance.count)).toBeLessThan(0.01);
  });
});
