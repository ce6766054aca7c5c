/** Plain descriptive statistics for one sample, written for fill weights with a large offset. */

/** Arithmetic mean, summed about the first value so that a large common offset loses no digits (two-pass idea, Chan, Golub & LeVeque 1983). */
export function mean(values: readonly number[]): number {
  if (values.length === 0) throw new RangeError('mean needs at least one value');
  const shift = values[0] as number;
  let sum = 0;
  for (const v of values) sum += v - shift;
  return shift + sum / values.length;
}

/** Sample standard deviation (n − 1 divisor), two-pass with the corrected sum (Chan, Golub & LeVeque 1983, eq. 1.7); null when n < 2. */
export function sampleSd(values: readonly number[]): number | null {
  const n = values.length;
  if (n < 2) return null;
  const m = mean(values);
  let sumSq = 0;
  let sumDev = 0;
  for (const v of values) {
    const d = v - m;
    sumSq += d * d;
    sumDev += d;
  }
  const variance = (sumSq - (sumDev * sumDev) / n) / (n - 1);
  return Math.sqrt(Math.max(variance, 0));
}

/** Range: largest minus smallest value. */
export function range(values: readonly number[]): number {
  if (values.length === 0) throw new RangeError('range needs at least one value');
  let lo = Infinity;
  let hi = -Infinity;
  for (const v of values) {
    if (v < lo) lo = v;
    if (v > hi) hi = v;
  }
  return hi - lo;
}
