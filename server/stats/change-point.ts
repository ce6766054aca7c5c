export interface ChangePointInput {
  mean: number;
  n: number;
}

export interface ChangePointEstimate {
  /** Index of the first point after the estimated change. */
  firstShiftedIndex: number;
  /** Estimated process mean after the change (n-weighted mean of the shifted points). */
  shiftedMean: number;
}

/**
 * Maximum-likelihood time of a step change in a normal mean with known centre and σ
 * (Samuel, Pignatiello & Calvin, J. Quality Technology 30(2) 1998): τ̂ = argmax_t (Σ_{i>t} nᵢ(x̄ᵢ − μ₀))² / Σ_{i>t} nᵢ,
 * written with weights nᵢ so that checks of different sizes count by their packs.
 */
export function stepChangePoint(points: readonly ChangePointInput[], centre: number): ChangePointEstimate | null {
  return bestStep(points, centre, 0);
}

/**
 * The same maximum-likelihood step estimate with the step's sign known (Samuel, Pignatiello & Calvin
 * 1998, restricted to a one-sided alternative): τ̂ = argmax_t max(0, ±Σ_{i>t} nᵢ(x̄ᵢ − μ₀))² / Σ_{i>t} nᵢ.
 * A shift down is never dated by an earlier shift up still in the segment. Null when no stretch lies
 * on that side of the centre.
 */
export function directedStepChangePoint(
  points: readonly ChangePointInput[],
  centre: number,
  direction: 'up' | 'down',
): ChangePointEstimate | null {
  return bestStep(points, centre, direction === 'up' ? 1 : -1);
}

/** Walks back from the last point so each candidate start t sees the sums over t..T; sign 0 is two-sided. */
function bestStep(points: readonly ChangePointInput[], centre: number, sign: 1 | -1 | 0): ChangePointEstimate | null {
  let best: ChangePointEstimate | null = null;
  let bestScore = -Infinity;
  let sumDev = 0;
  let sumN = 0;
  for (let t = points.length - 1; t >= 0; t -= 1) {
    const p = points[t] as ChangePointInput;
    sumDev += p.n * (p.mean - centre);
    sumN += p.n;
    const onSide = sign === 0 ? Math.abs(sumDev) : sign * sumDev;
    if (sign !== 0 && onSide <= 0) continue;
    const score = (onSide * onSide) / sumN;
    if (score >= bestScore) {
      bestScore = score;
      best = { firstShiftedIndex: t, shiftedMean: centre + sumDev / sumN };
    }
  }
  return best;
}
