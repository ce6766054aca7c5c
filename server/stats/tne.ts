/**
 * Tolerable negative error for prepackages by nominal quantity (EU Council Directive 76/211/EEC Annex I §2.4;
 * OIML R 87 carries the same table to 50 kg). Computed in whole milligrams so a percentage TNE rounds up to the
 * next 0.1 g exactly, which floating-point ceil does not always do.
 */

export interface NetQuantityLimits {
  /** TNE in the product's unit. */
  tne: number;
  /** T1 = Qn − TNE. */
  t1: number;
  /** T2 = Qn − 2·TNE. */
  t2: number;
}

type Band =
  | { upToMg: number; kind: 'percent'; permille: number }
  | { upToMg: number; kind: 'fixed'; mg: number };

// Each band covers nominals up to and including upToMg; the table is continuous at every boundary,
// so the side a boundary falls on does not change the TNE.
const BANDS: readonly Band[] = [
  { upToMg: 50_000, kind: 'percent', permille: 90 },
  { upToMg: 100_000, kind: 'fixed', mg: 4_500 },
  { upToMg: 200_000, kind: 'percent', permille: 45 },
  { upToMg: 300_000, kind: 'fixed', mg: 9_000 },
  { upToMg: 500_000, kind: 'percent', permille: 30 },
  { upToMg: 1_000_000, kind: 'fixed', mg: 15_000 },
  { upToMg: 10_000_000, kind: 'percent', permille: 15 },
  { upToMg: 15_000_000, kind: 'fixed', mg: 150_000 },
  { upToMg: Number.MAX_SAFE_INTEGER, kind: 'percent', permille: 10 },
];

const SMALLEST_MG = 5_000;
const LARGEST_MG = 50_000_000;

/** TNE in milligrams for a nominal in milligrams, percentage values rounded up to the next 100 mg (Directive 76/211/EEC Annex I §2.4). */
export function tneMilligrams(nominalMg: number): number {
  if (!Number.isInteger(nominalMg)) throw new RangeError('nominal must be a whole number of milligrams');
  if (nominalMg < SMALLEST_MG || nominalMg > LARGEST_MG) {
    throw new RangeError('the TNE table covers nominal quantities from 5 g to 50 kg');
  }
  const band = BANDS.find((b) => nominalMg <= b.upToMg) as Band;
  if (band.kind === 'fixed') return band.mg;
  // permille/1000 of the nominal, in thousandths of a milligram, rounded up to whole 100 mg steps with
  // integer division only (every value stays far below 2^53)
  const thousandthsMg = nominalMg * band.permille;
  const step = 100 * 1000;
  const whole = Math.floor(thousandthsMg / step);
  return (thousandthsMg % step === 0 ? whole : whole + 1) * 100;
}

/** TNE, T1 = Qn − TNE and T2 = Qn − 2·TNE in the product's unit (T2 from the rounded TNE: our reading of the texts). */
export function netQuantityLimits(nominal: number, unit: 'g' | 'kg'): NetQuantityLimits | null {
  const mgPerUnit = unit === 'kg' ? 1_000_000 : 1_000;
  const nominalMg = Math.round(nominal * mgPerUnit);
  if (Math.abs(nominalMg - nominal * mgPerUnit) > 1e-6 * mgPerUnit) return null;
  if (nominalMg < SMALLEST_MG || nominalMg > LARGEST_MG) return null;
  const tneMg = tneMilligrams(nominalMg);
  return {
    tne: tneMg / mgPerUnit,
    t1: (nominalMg - tneMg) / mgPerUnit,
    t2: (nominalMg - 2 * tneMg) / mgPerUnit,
  };
}
