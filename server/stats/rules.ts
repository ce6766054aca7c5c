/**
 * Zone and run rules on the standardised means of the mean chart (Western Electric Statistical
 * Quality Control Handbook 1956; Nelson, J. Quality Technology 16(4) 1984). Each rule looks at the
 * points of the current segment, most recent last, and says whether its pattern completes at the
 * last point. Rule ids are Heft's own descriptive words.
 */

export type Direction = 'up' | 'down';
export type Severity = 'act' | 'watch';

export type MeanRuleId =
  | 'beyond-3-sigma'
  | 'two-of-three-beyond-2-sigma'
  | 'four-of-five-beyond-1-sigma'
  | 'run-one-side'
  | 'trend'
  | 'sawtooth'
  | 'hugging-centre'
  | 'avoiding-centre';

export type RuleId = MeanRuleId | 'spread-up' | 'pack-below-t2' | 'ewma-shift' | 'cusum-shift';

export interface RuleHit {
  direction: Direction | null;
  /** How many of the most recent points make the pattern; the first of them is where it began. */
  span: number;
}

export interface MeanRuleOptions {
  runLength: 8 | 9;
}

type MeanRule = (z: readonly number[], options: MeanRuleOptions) => RuleHit | null;

function last(z: readonly number[], back = 0): number {
  return z[z.length - 1 - back] as number;
}

/** k of the last m points beyond `limit` on the side of the last point, the last point among them (WE 1956 zone tests). */
function kOfMBeyond(z: readonly number[], k: number, m: number, limit: number): RuleHit | null {
  if (z.length < k) return null;
  const x = last(z);
  const direction: Direction | null = x > limit ? 'up' : x < -limit ? 'down' : null;
  if (direction === null) return null;
  const sign = direction === 'up' ? 1 : -1;
  const window = Math.min(m, z.length);
  let count = 0;
  let earliest = 0;
  for (let back = 0; back < window; back += 1) {
    if (sign * last(z, back) > limit) {
      count += 1;
      earliest = back;
    }
  }
  return count >= k ? { direction, span: earliest + 1 } : null;
}

/** Every one of the last `length` points satisfies `test`. */
function lastAll(z: readonly number[], length: number, test: (x: number) => boolean): boolean {
  if (z.length < length) return false;
  for (let back = 0; back < length; back += 1) if (!test(last(z, back))) return false;
  return true;
}

const RULES: Record<MeanRuleId, MeanRule> = {
  'beyond-3-sigma': (z) => {
    const x = last(z);
    if (x > 3) return { direction: 'up', span: 1 };
    if (x < -3) return { direction: 'down', span: 1 };
    return null;
  },
  'two-of-three-beyond-2-sigma': (z) => kOfMBeyond(z, 2, 3, 2),
  'four-of-five-beyond-1-sigma': (z) => kOfMBeyond(z, 4, 5, 1),
  'run-one-side': (z, { runLength }) => {
    if (lastAll(z, runLength, (x) => x > 0)) return { direction: 'up', span: runLength };
    if (lastAll(z, runLength, (x) => x < 0)) return { direction: 'down', span: runLength };
    return null;
  },
  trend: (z) => {
    const points = 6;
    if (z.length < points) return null;
    let rising = true;
    let falling = true;
    for (let back = 0; back < points - 1; back += 1) {
      const d = last(z, back) - last(z, back + 1);
      if (!(d > 0)) rising = false;
      if (!(d < 0)) falling = false;
    }
    if (rising) return { direction: 'up', span: points };
    if (falling) return { direction: 'down', span: points };
    return null;
  },
  sawtooth: (z) => {
    const points = 14;
    if (z.length < points) return null;
    let previous = 0;
    for (let back = 0; back < points - 1; back += 1) {
      const d = Math.sign(last(z, back) - last(z, back + 1));
      if (d === 0 || d === previous) return null;
      previous = d;
    }
    return { direction: null, span: points };
  },
  'hugging-centre': (z) => (lastAll(z, 15, (x) => Math.abs(x) < 1) ? { direction: null, span: 15 } : null),
  'avoiding-centre': (z) => (lastAll(z, 8, (x) => Math.abs(x) > 1) ? { direction: null, span: 8 } : null),
};

export const MEAN_RULE_IDS = Object.keys(RULES) as MeanRuleId[];

/** How many recent points any mean rule can look at. */
export const MEAN_RULE_LOOKBACK = 15;

/** Applies one mean-chart rule to the segment's standardised means. */
export function applyMeanRule(id: MeanRuleId, z: readonly number[], options: MeanRuleOptions): RuleHit | null {
  if (z.length === 0) return null;
  return RULES[id](z, options);
}

export interface RuleDescription {
  id: RuleId;
  words: string;
  defaultSeverity: Severity;
  defaultEnabled: boolean;
}

/** Every rule with its default severity and on/off state, and the words a screen shows for it. */
export const RULE_CATALOGUE: readonly RuleDescription[] = [
  { id: 'beyond-3-sigma', words: 'beyond 3σ', defaultSeverity: 'act', defaultEnabled: true },
  { id: 'two-of-three-beyond-2-sigma', words: '2 of 3 beyond 2σ', defaultSeverity: 'watch', defaultEnabled: true },
  { id: 'four-of-five-beyond-1-sigma', words: '4 of 5 beyond 1σ', defaultSeverity: 'watch', defaultEnabled: true },
  { id: 'run-one-side', words: 'run on one side of centre', defaultSeverity: 'watch', defaultEnabled: true },
  { id: 'trend', words: '6 rising or falling', defaultSeverity: 'watch', defaultEnabled: false },
  { id: 'sawtooth', words: '14 alternating up and down', defaultSeverity: 'watch', defaultEnabled: false },
  { id: 'hugging-centre', words: '15 within 1σ of centre', defaultSeverity: 'watch', defaultEnabled: false },
  { id: 'avoiding-centre', words: '8 beyond 1σ on either side', defaultSeverity: 'watch', defaultEnabled: false },
  { id: 'spread-up', words: 'spread above its limit', defaultSeverity: 'act', defaultEnabled: true },
  { id: 'pack-below-t2', words: 'pack below T2', defaultSeverity: 'act', defaultEnabled: true },
  { id: 'ewma-shift', words: 'EWMA', defaultSeverity: 'act', defaultEnabled: true },
  { id: 'cusum-shift', words: 'CUSUM', defaultSeverity: 'act', defaultEnabled: true },
];
