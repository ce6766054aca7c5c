import { logGamma } from './distributions.js';

/**
 * d2 and d3 (mean and sd of the relative range of n normal values) for n = 2..25, as tabulated in
 * ASTM E2587 and ASTM MNL 7 (given here to 10 decimals from numerical integration of their
 * definitions; the 3-decimal printed tables agree within ±0.001).
 */
const D2: readonly number[] = [
  1.1283791671, 1.6925687506, 2.058750746, 2.3259289473, 2.5344127212, 2.7043567512, 2.8472006121,
  2.9700263244, 3.0775054617, 3.1728727038, 3.2584552797, 3.3359803541, 3.4067631082, 3.4718268899,
  3.5319827861, 3.5878839618, 3.6400637579, 3.6889630232, 3.7349501196, 3.7783358298, 3.8193846434,
  3.8583234233, 3.8953481485, 3.9306292195,
];
const D3: readonly number[] = [
  0.8525024664, 0.888368004, 0.8798082028, 0.8640819411, 0.8480396861, 0.8332053356, 0.8198314898,
  0.8078342746, 0.7970506735, 0.7873146206, 0.7784783412, 0.7704162021, 0.7630230956, 0.7562114297,
  0.7499080894, 0.744051784, 0.7385908534, 0.7334814955, 0.7286863457, 0.7241733407, 0.7199148084,
  0.7158867355, 0.7120681751, 0.7084407659,
];

export interface ChartConstants {
  n: number;
  d2: number;
  d3: number;
  c4: number;
  A2: number;
  A3: number;
  B3: number;
  B4: number;
  D3: number;
  D4: number;
}

/** c4(n) = √(2/(n−1))·Γ(n/2)/Γ((n−1)/2), the bias of s as an estimate of σ (ASTM E2587 §9; Montgomery, SQC, App. VI). */
export function c4(n: number): number {
  if (!Number.isInteger(n) || n < 2) throw new RangeError('c4 needs a whole n of at least 2');
  return Math.sqrt(2 / (n - 1)) * Math.exp(logGamma(n / 2) - logGamma((n - 1) / 2));
}

/** d2(n) for 2 ≤ n ≤ 25 from the ASTM E2587 table. */
export function d2(n: number): number {
  const value = D2[n - 2];
  if (value === undefined || !Number.isInteger(n)) throw new RangeError('d2 is tabulated for n = 2..25');
  return value;
}

/** d3(n) for 2 ≤ n ≤ 25 from the ASTM E2587 table. */
export function d3(n: number): number {
  const value = D3[n - 2];
  if (value === undefined || !Number.isInteger(n)) throw new RangeError('d3 is tabulated for n = 2..25');
  return value;
}

/** All chart factors for n: A2 = 3/(d2√n), A3 = 3/(c4√n), B3,B4 = 1 ∓ 3√(1−c4²)/c4, D3,D4 = 1 ∓ 3d3/d2 (ASTM E2587 Table 1 definitions). */
export function chartConstants(n: number): ChartConstants {
  const d2n = d2(n);
  const d3n = d3(n);
  const c4n = c4(n);
  const bSpread = (3 * Math.sqrt(1 - c4n * c4n)) / c4n;
  const dSpread = (3 * d3n) / d2n;
  return {
    n,
    d2: d2n,
    d3: d3n,
    c4: c4n,
    A2: 3 / (d2n * Math.sqrt(n)),
    A3: 3 / (c4n * Math.sqrt(n)),
    B3: Math.max(0, 1 - bSpread),
    B4: 1 + bSpread,
    D3: Math.max(0, 1 - dSpread),
    D4: 1 + dSpread,
  };
}
