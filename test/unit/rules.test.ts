import { describe, expect, it } from 'vitest';
import { freshSegment, judgePoint } from '../../server/stats/judge.js';
import { resolveRuleSet, type RuleSetOverrides } from '../../server/stats/rule-set.js';
import { applyMeanRule, MEAN_RULE_IDS, type MeanRuleId, RULE_CATALOGUE, type RuleId } from '../../server/stats/rules.js';
import { cusumStep, CUSUM_START, ewmaLimit, ewmaStep, EWMA_START } from '../../server/stats/small-shift.js';
import { simulateArl } from '../../server/stats/false-alarm.js';

/** The first index (0-based) at which a rule fires on a sequence of z values, or null. */
function firstFiring(rule: MeanRuleId, z: number[], runLength: 8 | 9 = 9): { at: number; direction: string | null; onset: number } | null {
  for (let i = 0; i < z.length; i += 1) {
    const hit = applyMeanRule(rule, z.slice(0, i + 1), { runLength });
    if (hit) return { at: i, direction: hit.direction, onset: i - hit.span + 1 };
  }
  return null;
}

function only(ids: RuleId[], extra: RuleSetOverrides = {}): RuleSetOverrides {
  return { ...extra, rules: Object.fromEntries(RULE_CATALOGUE.map((r) => [r.id, { enabled: ids.includes(r.id) }])) };
}

// Sequences crafted by hand from the rule definitions (Western Electric Statistical Quality Control
// Handbook 1956, Part A §1.5; Nelson 1984, J. Quality Technology 16(4)); each fires at the last point.
const FIRES: [MeanRuleId, number[], number, string | null, number][] = [
  ['beyond-3-sigma', [0.2, -1.1, 2.9, 3.01], 3, 'up', 3],
  ['beyond-3-sigma', [0.5, -3.2], 1, 'down', 1],
  ['two-of-three-beyond-2-sigma', [0.1, 2.1, 0.3, 2.4], 3, 'up', 1],
  ['two-of-three-beyond-2-sigma', [-2.2, -2.5], 1, 'down', 0],
  ['four-of-five-beyond-1-sigma', [1.2, 1.5, 0.2, 1.1, 1.3], 4, 'up', 0],
  ['four-of-five-beyond-1-sigma', [0, -1.1, -1.4, -0.5, -1.2, -1.05], 5, 'down', 1],
  ['run-one-side', [0.1, 0.5, 0.2, 1.1, 0.3, 0.7, 0.01, 0.2, 0.4], 8, 'up', 0],
  ['trend', [0, -0.5, -0.4, -0.1, 0.2, 0.6, 0.9], 6, 'up', 1],
  ['sawtooth', [0.1, 0.5, -0.2, 0.4, -0.3, 0.6, -0.1, 0.3, -0.4, 0.2, -0.5, 0.1, -0.2, 0.7], 13, null, 0],
  ['hugging-centre', [0.1, -0.2, 0.3, -0.4, 0.5, -0.6, 0.7, -0.8, 0.9, -0.1, 0.2, -0.3, 0.4, -0.5, 0.6], 14, null, 0],
  ['avoiding-centre', [1.2, -1.5, 1.1, -2.0, 1.4, -1.3, 2.2, -1.1], 7, null, 0],
];

// Near misses: the same patterns one point short or broken, which must not fire anywhere.
const MISSES: [MeanRuleId, number[]][] = [
  ['beyond-3-sigma', [2.99, -2.99, 3.0, -3.0]],
  ['two-of-three-beyond-2-sigma', [2.1, 0.3, 0.2, 2.4, 1.9, -2.1]],
  ['two-of-three-beyond-2-sigma', [2.1, 2.0]],
  ['four-of-five-beyond-1-sigma', [1.2, 1.5, 0.2, 1.1, 0.9, 1.3, -1.1]],
  ['run-one-side', [0.1, 0.5, 0.2, 1.1, 0.3, 0.7, 0.01, 0.2, 0, 0.4]],
  ['trend', [0, 0.1, 0.2, 0.3, 0.4, 0.4, 0.5, 0.6, 0.7, 0.8]],
  ['sawtooth', [0.1, 0.5, -0.2, 0.4, -0.3, 0.6, -0.1, 0.3, -0.4, 0.2, -0.5, 0.1, 0.2]],
  ['hugging-centre', [0.1, -0.2, 0.3, -0.4, 0.5, -0.6, 0.7, -0.8, 0.9, -0.1, 0.2, -0.3, 0.4, -0.5, 1.0]],
  ['avoiding-centre', [1.2, -1.5, 1.1, -2.0, 1.4, -1.3, 2.2, -0.9, 1.5]],
];

describe('mean-chart rules', () => {
  for (const [rule, z, at, direction, onset] of FIRES) {
    it(`when ${rule} meets ${JSON.stringify(z)}, then it fires at point ${at + 1} and not one point earlier`, () => {
      const hit = firstFiring(rule, z);
      expect(hit).toEqual({ at, direction, onset });
    });
  }
  for (const [rule, z] of MISSES) {
    it(`when ${rule} meets the near miss ${JSON.stringify(z)}, then it never fires`, () => {
      expect(firstFiring(rule, z)).toBeNull();
    });
  }
  it('when the run length is set to 8, then eight on one side fire where nine were needed before', () => {
    const z = [0.3, 0.1, 0.2, 0.5, 0.9, 0.4, 0.6, 0.2];
    expect(firstFiring('run-one-side', z, 9)).toBeNull();
    expect(firstFiring('run-one-side', z, 8)?.at).toBe(7);
  });
  it('when every rule is listed, then the catalogue has exactly the rules of the design, each with its default severity and on/off state', () => {
    // the defaults, written out from the shift-detection design (common practice, no source): the four
    // Western Electric zone rules on, the other four Nelson patterns off, the detectors and pack checks act
    const DESIGN: Record<string, [string, boolean]> = {
      'beyond-3-sigma': ['act', true],
      'two-of-three-beyond-2-sigma': ['watch', true],
      'four-of-five-beyond-1-sigma': ['watch', true],
      'run-one-side': ['watch', true],
      trend: ['watch', false],
      sawtooth: ['watch', false],
      'hugging-centre': ['watch', false],
      'avoiding-centre': ['watch', false],
      'spread-up': ['act', true],
      'pack-below-t2': ['act', true],
      'ewma-shift': ['act', true],
      'cusum-shift': ['act', true],
    };
    const byId = Object.fromEntries(RULE_CATALOGUE.map((r) => [r.id, [r.defaultSeverity, r.defaultEnabled]]));
    expect(byId).toEqual(DESIGN);
    // the eight mean-chart rules are the eight Nelson (1984) tests, each with words for the screens
    expect([...MEAN_RULE_IDS].sort()).toEqual(Object.keys(DESIGN).slice(0, 8).sort());
    for (const r of RULE_CATALOGUE) expect(r.words.length, r.id).toBeGreaterThan(2);
  });
});

describe('EWMA', () => {
  const params = { lambda: 0.2, L: 2.962 };
  it('when the first points arrive, then the exact limits widen as L·√(λ/(2−λ)·(1−(1−λ)^{2i}))', () => {
    // hand-computed: i = 1: 2.962·√(0.2/1.8·0.36) = 2.962·0.2 = 0.5924;
    // i = 2: 2.962·√((1/9)·(1 − 0.4096)) = 2.962·√0.0656 = 0.758642; asymptote 2.962·√(1/9) = 0.987333
    expect(ewmaLimit(params, 1)).toBeCloseTo(0.5924, 6);
    expect(ewmaLimit(params, 2)).toBeCloseTo(0.758642, 5);
    expect(ewmaLimit(params, 1000)).toBeCloseTo(0.987333, 6);
  });
  it('when z = 1, 2, 0.5 arrive, then w = 0.2, 0.56, 0.548 (w₀ = 0), and a big first point signals at once', () => {
    let s = { ...EWMA_START };
    const values: number[] = [];
    [1, 2, 0.5].forEach((z, i) => {
      const step = ewmaStep(params, s, z, i);
      s = step.state;
      values.push(step.state.value);
    });
    expect(values[0]).toBeCloseTo(0.2, 12);
    expect(values[1]).toBeCloseTo(0.56, 12);
    expect(values[2]).toBeCloseTo(0.548, 12);
    expect(ewmaStep(params, { ...EWMA_START }, 3, 0).signal).toBe('up'); // 0.6 > 0.5924
  });
});

describe('tabular CUSUM', () => {
  // source: Montgomery, Introduction to SQC, Example 9.1 / Table 9.1 (from memory: 30 observations, μ₀ = 10,
  // σ = 1, K = 0.5, H = 5; first signal at sample 29 with C⁺ = 5.28; N⁺ = 7 so the shift began after sample 22)
  const x = [9.45, 7.99, 9.29, 11.66, 12.16, 10.18, 8.04, 11.46, 9.2, 10.34, 9.03, 11.47, 10.51, 9.4, 10.08, 9.37, 10.62, 10.31, 8.52, 10.84, 10.9, 9.33, 12.29, 11.5, 10.6, 11.08, 10.38, 11.62, 11.31, 10.52];
  it('when the worked example is run, then C⁺ first exceeds 5 at sample 29 and was last zero at sample 22', () => {
    let s = { ...CUSUM_START };
    let first: { sample: number; upper: number; lastZero: number } | null = null;
    x.forEach((v, i) => {
      const step = cusumStep({ k: 0.5, h: 5 }, s, v - 10, i);
      s = step.state;
      if (step.signal && !first) first = { sample: i + 1, upper: s.upper, lastZero: (step.lastZeroAt as number) + 1 };
    });
    expect(first).not.toBeNull();
    const f = first as unknown as { sample: number; upper: number; lastZero: number };
    expect(f.sample).toBe(29);
    expect(f.upper).toBeCloseTo(5.28, 2);
    expect(f.lastZero).toBe(22);
  });
});

describe('average run lengths by seeded simulation', () => {
  it('when beyond-3-sigma runs alone in control, then the ARL is about 370 (±10 %)', () => {
    // source: Shewhart closed form 1/[2Φ(−3)] = 370.40 (CHECK-VALUES.md)
    const est = simulateArl(resolveRuleSet(only(['beyond-3-sigma'])), { seed: 11, runs: 3000, maxLength: 100_000 });
    expect(est.arl).toBeGreaterThan(370.4 * 0.9);
    expect(est.arl).toBeLessThan(370.4 * 1.1);
  });
  it('when CUSUM (k 0.5, h 5) runs in control and at a 1σ shift, then ARL ≈ 465 and ≈ 10.4 (±10 %)', () => {
    // source: Montgomery, SQC, CUSUM chapter after Hawkins (1993), h = 5 row (from memory, recomputed: CHECK-VALUES.md)
    const set = resolveRuleSet(only(['cusum-shift']));
    const inControl = simulateArl(set, { seed: 12, runs: 3000, maxLength: 100_000 });
    expect(inControl.arl).toBeGreaterThan(465 * 0.9);
    expect(inControl.arl).toBeLessThan(465 * 1.1);
    const shifted = simulateArl(set, { seed: 13, runs: 3000, maxLength: 100_000, shift: 1 });
    expect(shifted.arl).toBeGreaterThan(10.4 * 0.9);
    expect(shifted.arl).toBeLessThan(10.4 * 1.1);
  });
  it('when the Western Electric four run together, then the in-control ARL is 91.75 within 5 %', () => {
    // source: Champ & Woodall (1987), Technometrics 29(4), Table 2 (from memory, recomputed by a Markov chain)
    const set = resolveRuleSet(only(['beyond-3-sigma', 'two-of-three-beyond-2-sigma', 'four-of-five-beyond-1-sigma', 'run-one-side'], { runLength: 8 }));
    const est = simulateArl(set, { seed: 14, runs: 12_000, maxLength: 100_000 });
    expect(est.arl).toBeGreaterThan(91.75 * 0.95);
    expect(est.arl).toBeLessThan(91.75 * 1.05);
  });
  it('when EWMA (λ 0.2, L 2.962) runs in control, then the ARL is near 500 (exact limits run a little lower)', () => {
    // source: Lucas & Saccucci (1990), Technometrics 32(1), Table 3 (from memory, via Montgomery's EWMA chapter)
    const est = simulateArl(resolveRuleSet(only(['ewma-shift'])), { seed: 15, runs: 3000, maxLength: 100_000 });
    expect(est.arl).toBeGreaterThan(500 * 0.88);
    expect(est.arl).toBeLessThan(500 * 1.1);
  });
});

describe('judging one point with a whole rule set', () => {
  it('when the state is judged, then the input state is left untouched (pure)', () => {
    const set = resolveRuleSet();
    const state = freshSegment();
    const snapshot = JSON.stringify(state);
    const out = judgePoint(set, state, { z: 3.5, spread: null });
    expect(JSON.stringify(state)).toBe(snapshot);
    expect(out.signals.map((s) => s.rule)).toContain('beyond-3-sigma');
    expect(out.state.count).toBe(1);
  });
});
