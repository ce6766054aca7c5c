import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { c4, chartConstants } from '../../server/stats/chart-constants.js';
import { estimateSigma, meanChartLimits, spreadChartLimits } from '../../server/stats/control-limits.js';
import { normalCdf, logGamma } from '../../server/stats/distributions.js';
import { mulberry32 } from '../../server/stats/random.js';
import { directedStepChangePoint, stepChangePoint } from '../../server/stats/change-point.js';
import { summarizeSample } from '../../server/stats/sample-summary.js';

function csv(name: string): Record<string, number>[] {
  const [head, ...rows] = readFileSync(new URL(`../fixtures/${name}`, import.meta.url), 'utf8').trim().split(/\r?\n/);
  const keys = (head as string).split(',');
  return rows.map((r) => Object.fromEntries(r.split(',').map((v, i) => [keys[i] as string, Number(v)])));
}

describe('control chart constants, n = 2..25', () => {
  // source: CHECK-VALUES.md control-chart-constants.csv (from the definitions; ASTM E2587 / ASTM MNL 7
  // 3-decimal tables agree within 0.001)
  const table = csv('control-chart-constants.csv');
  it('when each factor is compared with the published table, then all agree within 0.001 (c4 within 0.0001)', () => {
    expect(table).toHaveLength(24);
    for (const row of table) {
      const k = chartConstants(row.n as number);
      for (const name of ['d2', 'd3', 'A2', 'A3', 'B3', 'B4', 'D3', 'D4'] as const) {
        expect(Math.abs(k[name] - (row[name] as number)), `${name} for n = ${row.n}`).toBeLessThan(0.001);
      }
      expect(Math.abs(k.c4 - (row.c4 as number))).toBeLessThan(0.0001);
    }
  });

  it('when c4 is computed from the gamma function independently, then it matches for every n', () => {
    // source: c4(n) = √(2/(n−1))·Γ(n/2)/Γ((n−1)/2) (ASTM E2587 §9); Γ by Lanczos here vs jstat's gammaln in the code
    const lanczosLogGamma = (z: number): number => {
      const g = 7;
      const coef = [0.99999999999980993, 676.5203681218851, -1259.1392167224028, 771.32342877765313, -176.61502916214059, 12.507343278686905, -0.13857109526572012, 9.9843695780195716e-6, 1.5056327351493116e-7];
      const x = z - 1;
      let a = coef[0] as number;
      const t = x + g + 0.5;
      for (let i = 1; i < g + 2; i += 1) a += (coef[i] as number) / (x + i);
      return 0.5 * Math.log(2 * Math.PI) + (x + 0.5) * Math.log(t) - t + Math.log(a);
    };
    for (let n = 2; n <= 25; n += 1) {
      const expected = Math.sqrt(2 / (n - 1)) * Math.exp(lanczosLogGamma(n / 2) - lanczosLogGamma((n - 1) / 2));
      expect(c4(n)).toBeCloseTo(expected, 10);
      expect(logGamma(n / 2)).toBeCloseTo(lanczosLogGamma(n / 2), 9);
    }
  });

  it('when d2 is integrated numerically from its definition, then it matches the table', () => {
    // source: d2(n) = ∫ [1 − (1 − Φ(x))ⁿ − Φ(x)ⁿ] dx, the expected range of n standard normals (ASTM E2587 §8)
    for (const n of [2, 3, 5, 10, 25]) {
      let area = 0;
      const h = 0.002;
      for (let x = -9; x < 9; x += h) {
        const mid = x + h / 2;
        const p = normalCdf(mid);
        area += (1 - (1 - p) ** n - p ** n) * h;
      }
      expect(chartConstants(n).d2).toBeCloseTo(area, 5);
    }
  });
});

describe('limits from a baseline: the hard-bake flow width example', () => {
  // source: Montgomery, Introduction to Statistical Quality Control, Table 6.1 and Example 6.1 (from memory;
  // the book used 3-decimal constants, so limits are compared within 1e-4): x̿ = 1.5056, R̄ = 0.32521,
  // X̄ chart 1.3180 / 1.6932, R chart UCL 0.68749, LCL 0; Cp ≈ 1.19 with specs 1.50 ± 0.50
  const rows = csv('hard-bake-flow-width.csv');
  const samples = rows.map((r) => [r.x1, r.x2, r.x3, r.x4, r.x5] as number[]);

  it('when each sample is summarised, then mean and range equal the book’s columns', () => {
    rows.forEach((r, i) => {
      const s = summarizeSample(samples[i] as number[], 0);
      expect(s.mean).toBeCloseTo(r.pub_xbar as number, 4);
      expect(s.range).toBeCloseTo(r.pub_R as number, 4);
    });
  });

  it('when σ is estimated by R̄/d2, then the grand mean, R̄ and the limits match the published ones', () => {
    const baseline = samples.map((v) => summarizeSample(v, 0));
    const est = estimateSigma(baseline, 'rbar');
    const rbar = baseline.reduce((a, s) => a + s.range, 0) / baseline.length;
    expect(est.centre).toBeCloseTo(1.5056, 4);
    expect(rbar).toBeCloseTo(0.32521, 5);
    const mean = meanChartLimits(est, 5);
    expect(Math.abs(mean.ucl - 1.6932)).toBeLessThan(1e-4);
    expect(Math.abs(mean.lcl - 1.318)).toBeLessThan(1e-4);
    const spread = spreadChartLimits(est.sigma, 5);
    expect(spread.chart).toBe('R');
    // the book's 0.68749 is R̄ × 2.114 (D4 to 3 decimals); the exact D4 = 2.11450 gives 0.68765
    expect(Math.abs(rbar * 2.114 - 0.68749)).toBeLessThan(1e-5);
    expect(Math.abs(spread.ucl - 0.68749)).toBeLessThan(2e-4);
    expect(spread.lcl).toBe(0);
    const cp = (2.0 - 1.0) / (6 * est.sigma);
    expect(cp).toBeCloseTo(1.19, 2);
  });

  it('when σ is estimated by s̄/c4 and pooled s, then both land near R̄/d2 on the same data', () => {
    const baseline = samples.map((v) => summarizeSample(v, 0));
    const r = estimateSigma(baseline, 'rbar').sigma;
    expect(estimateSigma(baseline, 'sbar').sigma).toBeCloseTo(r, 1);
    expect(estimateSigma(baseline, 'pooled').sigma).toBeCloseTo(r, 1);
  });
});

describe('limits for variable subgroup size and individuals', () => {
  it('when n varies, then each point gets centre ± 3σ/√nᵢ and zones at 1σ/√nᵢ and 2σ/√nᵢ', () => {
    // source: Montgomery, SQC §6.3.2 (variable sample size): limits x̿ ± A3·s̄ computed per sample
    for (const n of [2, 3, 5, 8, 13]) {
      const l = meanChartLimits({ centre: 500, sigma: 2 }, n);
      expect(l.ucl).toBeCloseTo(500 + (3 * 2) / Math.sqrt(n), 12);
      expect(l.lcl).toBeCloseTo(500 - (3 * 2) / Math.sqrt(n), 12);
      expect(l.zone1[1]).toBeCloseTo(500 + 2 / Math.sqrt(n), 12);
      expect(l.zone2[0]).toBeCloseTo(500 - 4 / Math.sqrt(n), 12);
    }
  });

  it('when n = 1, then σ̂ = MR̄/1.128 and the moving-range UCL is 3.267·MR̄', () => {
    // source: ASTM E2587 §10 (individuals and moving range chart); Montgomery, SQC §6.4
    const values = [10, 12, 11, 14, 13, 12, 15, 14, 13, 12];
    const est = estimateSigma(values.map((v) => ({ n: 1, mean: v, sd: null, range: 0 })), 'mrbar');
    const mrbar = values.slice(1).reduce((a, v, i) => a + Math.abs(v - (values[i] as number)), 0) / (values.length - 1);
    expect(est.mrbar).toBeCloseTo(mrbar, 12);
    expect(est.sigma).toBeCloseTo(mrbar / 1.128, 3);
    expect(spreadChartLimits(est.sigma, 1).ucl).toBeCloseTo(3.267 * mrbar, 2);
  });

  it('when n > 10, then the spread chart is an S chart with c4σ ± 3σ√(1 − c4²), bounded below at 0', () => {
    // source: Montgomery, SQC §6.3.1 (S chart with σ given): centre c4σ, limits B5σ / B6σ
    const s = spreadChartLimits(2, 12);
    const k = c4(12);
    expect(s.chart).toBe('S');
    expect(s.centre).toBeCloseTo(k * 2, 12);
    expect(s.ucl).toBeCloseTo(k * 2 + 6 * Math.sqrt(1 - k * k), 12);
    expect(s.lcl).toBeCloseTo(Math.max(0, k * 2 - 6 * Math.sqrt(1 - k * k)), 12);
    expect(spreadChartLimits(2, 3, true).lcl).toBe(0);
  });
});

describe('change point of a step in the mean', () => {
  it('when the mean steps up after point 12 of 20, then the maximum-likelihood estimate is point 12', () => {
    // source: Samuel, Pignatiello & Calvin (1998), J. Quality Technology 30(2): τ̂ maximises (T − t)(x̄_{T,t} − μ₀)²
    const means = [0.1, -0.3, 0.2, 0.05, -0.1, 0.3, -0.2, 0.1, 0, -0.15, 0.2, -0.1, 1.6, 1.4, 1.7, 1.3, 1.5, 1.6, 1.45, 1.55];
    const est = stepChangePoint(means.map((m) => ({ mean: m, n: 5 })), 0);
    expect(est?.firstShiftedIndex).toBe(12);
    expect(est?.shiftedMean).toBeCloseTo(1.5125, 4);
  });

  it('when the sign of the step is known, then the estimate is the one-sided maximum, found by brute force over every start', () => {
    // property test on invented data: the one-sided form of the same likelihood (Samuel, Pignatiello & Calvin 1998),
    // checked against a direct evaluation of max(0, ±Σ nᵢ(x̄ᵢ − μ₀))² / Σ nᵢ for every candidate start
    const uniform = mulberry32(7);
    const next = () => uniform() * 4 - 2;
    for (let trial = 0; trial < 200; trial += 1) {
      const points = Array.from({ length: 1 + (trial % 30) }, (_, i) => ({ mean: next() + (i > 10 ? 1 : 0), n: 1 + (i % 5) }));
      for (const direction of ['up', 'down'] as const) {
        const sign = direction === 'up' ? 1 : -1;
        let best: { t: number; score: number; mean: number } | null = null;
        for (let t = 0; t < points.length; t += 1) {
          const tail = points.slice(t);
          const dev = tail.reduce((a, p) => a + p.n * p.mean, 0);
          const n = tail.reduce((a, p) => a + p.n, 0);
          const score = sign * dev > 0 ? (dev * dev) / n : -1;
          if (score > 0 && (best === null || score > best.score)) best = { t, score, mean: dev / n };
        }
        const est = directedStepChangePoint(points, 0, direction);
        expect(est === null).toBe(best === null);
        expect(est?.firstShiftedIndex).toBe(best?.t);
        expect(Math.abs((est?.shiftedMean ?? 0) - (best?.mean ?? 0))).toBeLessThan(1e-12);
      }
    }
  });

  it('when a long step up is followed by one low point, then the step down is dated at that point, not at the step up', () => {
    const means = [0, 0.1, -0.1, 2, 2.1, 1.9, 2, 2.2, 1.8, 2, -3];
    const points = means.map((m) => ({ mean: m, n: 5 }));
    // the two-sided estimate dates the stretch above the centre
    expect(stepChangePoint(points, 0)?.firstShiftedIndex).toBe(3);
    const down = directedStepChangePoint(points, 0, 'down');
    expect(down?.firstShiftedIndex).toBe(10);
    expect(down?.shiftedMean).toBeCloseTo(-3, 12);
  });
});
