import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import * as ss from 'simple-statistics';
import { mean, range, sampleSd } from '../../server/stats/descriptive.js';
import { normalCdf, studentTQuantile, studentTTwoSidedP } from '../../server/stats/distributions.js';
import { mulberry32 } from '../../server/stats/random.js';
import { summarizeSample } from '../../server/stats/sample-summary.js';

function strd(name: string): number[] {
  return readFileSync(new URL(`../fixtures/strd-${name}.txt`, import.meta.url), 'utf8')
    .split('\n')
    .filter((l) => l.trim() && !l.startsWith('#'))
    .map(Number);
}

describe('mean and standard deviation against NIST StRD certified values', () => {
  // source: NIST Statistical Reference Datasets, Univariate Summary Statistics (certified values)
  const cases: [string, number, number, number][] = [
    ['michelso', 100, 299.8524, 0.0790105478190518],
    ['mavro', 50, 2.001856, 0.000429123454003053],
    ['numacc1', 3, 10000002, 1],
    ['numacc2', 1001, 1.2, 0.1],
  ];
  for (const [name, n, certifiedMean, certifiedSd] of cases) {
    it(`when the data is ${name}, then mean and sd match to 12+ significant digits`, () => {
      const values = strd(name);
      expect(values).toHaveLength(n);
      expect(Math.abs(mean(values) - certifiedMean) / certifiedMean).toBeLessThan(1e-13);
      expect(Math.abs((sampleSd(values) as number) - certifiedSd) / certifiedSd).toBeLessThan(1e-10);
    });
  }

  it('when the values sit on a huge offset, then the naive sum-of-squares formula would fail but ours does not', () => {
    // source: NIST StRD NumAcc1 shifted further (common practice, no source: a property of stable algorithms)
    const values = [1e9 + 1, 1e9 + 3, 1e9 + 2];
    expect(sampleSd(values)).toBeCloseTo(1, 9);
  });

  it('when there is one value, then sd is null; range is max − min', () => {
    expect(sampleSd([500])).toBeNull();
    expect(range([3, 9, 1])).toBe(8);
  });
});

describe("Student's t and the normal distribution", () => {
  // source: NIST/SEMATECH e-Handbook of Statistical Methods §1.3.6.7.2, upper critical values of t
  const table: [number, number, number, number][] = [
    [1, 6.314, 12.706, 63.657],
    [2, 2.92, 4.303, 9.925],
    [5, 2.015, 2.571, 4.032],
    [9, 1.833, 2.262, 3.25],
    [10, 1.812, 2.228, 3.169],
    [29, 1.699, 2.045, 2.756],
    [30, 1.697, 2.042, 2.75],
    [100, 1.66, 1.984, 2.626],
  ];
  for (const [df, a05, a025, a005] of table) {
    it(`when df = ${df}, then the 0.05, 0.025 and 0.005 upper critical values match the table`, () => {
      expect(studentTQuantile(0.95, df)).toBeCloseTo(a05, 3);
      expect(studentTQuantile(0.975, df)).toBeCloseTo(a025, 3);
      expect(studentTQuantile(0.995, df)).toBeCloseTo(a005, 3);
      // a critical value at α one-sided has a two-sided p of 2α
      expect(studentTTwoSidedP(a025, df)).toBeCloseTo(0.05, 3);
    });
  }

  it('when df is very large, then t approaches the normal: 1.645, 1.960, 2.576', () => {
    // source: NIST/SEMATECH e-Handbook §1.3.6.7.2, row ∞
    expect(studentTQuantile(0.95, 1e7)).toBeCloseTo(1.645, 3);
    expect(studentTQuantile(0.975, 1e7)).toBeCloseTo(1.96, 3);
    expect(studentTQuantile(0.995, 1e7)).toBeCloseTo(2.576, 3);
  });

  it('when z is 1, 2 or 3, then the two-sided normal tails are 0.317311, 0.045500, 0.002700', () => {
    // source: exact normal tail areas (CHECK-VALUES.md, normal tails); P(Z > 3) = 0.0013499
    const twoSided = (z: number) => 2 * (1 - normalCdf(z));
    expect(twoSided(1)).toBeCloseTo(0.317311, 6);
    expect(twoSided(2)).toBeCloseTo(0.0455, 6);
    expect(twoSided(3)).toBeCloseTo(0.0027, 6);
    expect(1 - normalCdf(3)).toBeCloseTo(0.0013499, 7);
  });

  it('when z is far out, then Φ(z) keeps its relative accuracy: Φ(−8) = 6.220961e-16, Φ(−10) = 7.619853e-24', () => {
    // source: Abramowitz & Stegun, Table 26.2 (far tail of the normal; from memory, to 7 figures)
    const relative = (got: number, want: number) => Math.abs(got - want) / want;
    expect(relative(normalCdf(-8), 6.220961e-16)).toBeLessThan(1e-6);
    expect(relative(normalCdf(-10), 7.619853e-24)).toBeLessThan(1e-6);
  });

  it("when |t| is large, then Student's two-sided p is tiny but not 0, and matches the closed forms for 1 and 2 degrees of freedom", () => {
    // closed forms of Student's t (common practice, no source; they follow from its density): ν = 1
    // (Cauchy) p = (2/π)·atan(1/|t|); ν = 2: p = 1 − |t|/√(t²+2) = 2/(√(t²+2)·(√(t²+2)+|t|))
    const relative = (got: number, want: number) => Math.abs(got - want) / want;
    for (const t of [3, 30, 1e3, 1e8, -1e5]) {
      expect(relative(studentTTwoSidedP(t, 1), (2 / Math.PI) * Math.atan(1 / Math.abs(t))), `ν 1, t ${t}`).toBeLessThan(1e-8);
      const r = Math.sqrt(t * t + 2);
      expect(relative(studentTTwoSidedP(t, 2), 2 / (r * (r + Math.abs(t)))), `ν 2, t ${t}`).toBeLessThan(1e-8);
    }
    // for very many degrees of freedom t is normal: 2Φ(−9) = 2.257177e-19 (Abramowitz & Stegun 26.2, from memory)
    expect(relative(studentTTwoSidedP(9, 1e9), 2.257177e-19)).toBeLessThan(1e-3);
    // a Welch t of −12.95 on 137 df (the size of the e-Handbook's AUTO83B comparison): small, never 0
    const p = studentTTwoSidedP(-12.94627, 136.875);
    expect(p).toBeGreaterThan(0);
    expect(p).toBeLessThan(1e-20);
  });
});

describe('per-check summary', () => {
  it('when five packs are weighed, then mean, sd, SE, t, p and the 95 % interval are as worked by hand', () => {
    // hand-worked: 498, 502, 500, 503, 497 → x̄ = 500, Σd² = 4+4+0+9+9 = 26, s = √(26/4) = 2.549510,
    // SE = s/√5 = 1.140175, t against 499 = 1/1.140175 = 0.877058, df 4, t₀.₉₇₅,₄ = 2.776445
    const s = summarizeSample([498, 502, 500, 503, 497], 499);
    expect(s.mean).toBe(500);
    expect(s.sd).toBeCloseTo(2.54951, 5);
    expect(s.se).toBeCloseTo(1.140175, 6);
    expect(s.t).toBeCloseTo(0.877058, 6);
    expect(s.df).toBe(4);
    expect(s.ci95?.[0]).toBeCloseTo(500 - 2.776445 * 1.140175, 5);
    expect(s.ci95?.[1]).toBeCloseTo(500 + 2.776445 * 1.140175, 5);
    // p checked by integrating the t density with 4 df independently (Simpson's rule):
    // f(t) = Γ(5/2)/(√(4π)·Γ(2))·(1 + t²/4)^(−5/2) = 0.375·(1 + t²/4)^(−5/2)
    const density = (x: number) => 0.375 * (1 + (x * x) / 4) ** -2.5;
    const steps = 20_000;
    const h = (s.t as number) / steps;
    let area = density(0) + density(s.t as number);
    for (let i = 1; i < steps; i += 1) area += (i % 2 ? 4 : 2) * density(i * h);
    const central = (area * h) / 3; // ∫₀^t f
    expect(s.p).toBeCloseTo(1 - 2 * central, 8);
  });

  it('when compared with simple-statistics, then mean and sd agree on random fill weights (property)', () => {
    const next = mulberry32(7);
    for (let k = 0; k < 200; k += 1) {
      const n = 2 + Math.floor(next() * 40);
      const values = Array.from({ length: n }, () => 500 + (next() - 0.5) * 20);
      expect(mean(values)).toBeCloseTo(ss.mean(values), 9);
      expect(sampleSd(values) as number).toBeCloseTo(ss.sampleStandardDeviation(values), 9);
    }
  });

  it('when all packs weigh the same, then t and p are null with the reason', () => {
    const s = summarizeSample([500, 500, 500], 499);
    expect(s.sd).toBe(0);
    expect(s.t).toBeNull();
    expect(s.p).toBeNull();
    expect(s.unavailable.t).toMatch(/standard error is zero/);
  });

  it('when there is one pack, then sd, SE, t, p and the interval are null, never NaN', () => {
    const s = summarizeSample([501], 500);
    expect([s.sd, s.se, s.t, s.p, s.ci95, s.df]).toEqual([null, null, null, null, null, null]);
    expect(s.unavailable.sd).toMatch(/one value/);
  });
});
