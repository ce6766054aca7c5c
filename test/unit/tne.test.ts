import { describe, expect, it } from 'vitest';
import { netQuantityLimits, tneMilligrams } from '../../server/stats/tne.js';

describe('tolerable negative error', () => {
  // source: EU Council Directive 76/211/EEC Annex I §2.4 (the same table in OIML R 87); worked values
  // from CHECK-VALUES.md "Net quantity of prepackages"
  const worked: [number, 'g' | 'kg', number, number, number][] = [
    [25, 'g', 2.3, 22.7, 20.4],
    [100, 'g', 4.5, 95.5, 91],
    [250, 'g', 9, 241, 232],
    [500, 'g', 15, 485, 470],
    [2.5, 'kg', 0.0375, 2.4625, 2.425],
    [12, 'kg', 0.15, 11.85, 11.7],
  ];
  for (const [nominal, unit, tne, t1, t2] of worked) {
    it(`when the nominal is ${nominal} ${unit}, then TNE ${tne}, T1 ${t1}, T2 ${t2}`, () => {
      const limits = netQuantityLimits(nominal, unit);
      expect(limits?.tne).toBeCloseTo(tne, 9);
      expect(limits?.t1).toBeCloseTo(t1, 9);
      expect(limits?.t2).toBeCloseTo(t2, 9);
    });
  }

  it('when a nominal sits on a band boundary, then both bands give the same TNE (the table is continuous)', () => {
    // source: Directive 76/211/EEC Annex I §2.4: 9 % of 50 = 4.5; 4.5 % of 100 = 4.5; 4.5 % of 200 = 9;
    // 3 % of 300 = 9; 3 % of 500 = 15; 1.5 % of 1000 = 15; 1.5 % of 10 000 = 150; 1 % of 15 000 = 150
    expect(tneMilligrams(50_000)).toBe(4_500);
    expect(tneMilligrams(100_000)).toBe(4_500);
    expect(tneMilligrams(200_000)).toBe(9_000);
    expect(tneMilligrams(300_000)).toBe(9_000);
    expect(tneMilligrams(500_000)).toBe(15_000);
    expect(tneMilligrams(1_000_000)).toBe(15_000);
    expect(tneMilligrams(10_000_000)).toBe(150_000);
    expect(tneMilligrams(15_000_000)).toBe(150_000);
  });

  it('when the percentage gives a fraction of 0.1 g, then it is rounded up to the next 0.1 g', () => {
    // source: Directive 76/211/EEC Annex I §2.4 ("rounded up to the nearest tenth of a gram")
    expect(tneMilligrams(25_000)).toBe(2_300); // 9 % of 25 = 2.25
    expect(tneMilligrams(110_000)).toBe(5_000); // 4.5 % of 110 = 4.95
    expect(tneMilligrams(333_000)).toBe(10_000); // 3 % of 333 = 9.99
    expect(tneMilligrams(1_234_000)).toBe(18_600); // 1.5 % of 1234 = 18.51
    expect(tneMilligrams(150_000)).toBe(6_800); // 4.5 % of 150 = 6.75
  });

  it('when the percentage is exact in tenths, then it is not rounded further, where float ceil would go wrong', () => {
    // 9 % of 10 g = 0.9 g exactly; 0.09 * 10 = 0.8999999999999999 in binary floating point
    expect(tneMilligrams(10_000)).toBe(900);
    // 3 % of 410 g = 12.3 g exactly; 410 * 0.03 = 12.299999999999999 in floats
    expect(tneMilligrams(410_000)).toBe(12_300);
  });

  it('when the nominal is outside 5 g to 50 kg, then there is no TNE', () => {
    expect(netQuantityLimits(4, 'g')).toBeNull();
    expect(netQuantityLimits(51, 'kg')).toBeNull();
  });
});
