/**
 * Reading a scale's line of text: what a bench scale or a scale bridge sends for each weighing. Pure
 * and free of Node and DOM, so the entry page, the scale bridge and the server read lines alike.
 */

export type ScaleUnit = 'g' | 'kg';

/** How a line from one scale is read; the parts of a line's scale profile that concern the text. */
export interface ReadingRules {
  /** A regular expression with a named group `weight` and optionally `unit`; null for the default. */
  pattern: string | null;
  /** Lines matching this are readings taken while the scale was still settling: ignored. */
  unstablePattern: string | null;
  /** The unit when the line names none. */
  defaultUnit: ScaleUnit;
}

export type Reading =
  | { kind: 'weight'; value: number; unit: ScaleUnit }
  | { kind: 'unstable' }
  | { kind: 'empty'; value: number; unit: ScaleUnit }
  | { kind: 'unreadable'; reason: string };

/**
 * The default: the first signed decimal number (a dot or a comma as the decimal mark, no thousands
 * separators) with an optional unit word after it.
 */
export const DEFAULT_READING_PATTERN = String.raw`(?<weight>[-+]?\s*(?:\d+(?:[.,]\d+)?|[.,]\d+))\s*(?<unit>[a-zA-Z]+)?`;

// biome-ignore lint/suspicious/noControlCharactersInRegex: a garbled line is one with control characters in it
const CONTROL = /[\u0000-\u0008\u000b\u000c\u000e-\u001f\u007f\ufffd]/;

/** Why a pattern cannot read weights, or null when it can: it must compile and name a group `weight`. */
export function patternProblem(pattern: string): string | null {
  let re: RegExp;
  try {
    re = new RegExp(pattern);
  } catch (err) {
    return `not a regular expression: ${(err as Error).message}`;
  }
  if (!/\(\?<weight>/.test(re.source)) return 'needs a named group (?<weight>…) for the number';
  return null;
}

/** Compiles the rules once, for a stream of lines from one scale. */
export function readingReader(rules: ReadingRules): (line: string) => Reading {
  const pattern = new RegExp(rules.pattern ?? DEFAULT_READING_PATTERN);
  const unstable = rules.unstablePattern ? new RegExp(rules.unstablePattern) : null;
  return (raw) => {
    const line = raw.replace(/[\r\n]+$/, '');
    if (CONTROL.test(line)) return { kind: 'unreadable', reason: 'garbled: the line has control characters in it (check the baud rate and parity)' };
    if (unstable?.test(line)) return { kind: 'unstable' };
    const match = pattern.exec(line);
    const number = match?.groups?.weight;
    if (number === undefined) return { kind: 'unreadable', reason: 'no weight in the line' };
    const value = Number(number.replace(/\s+/g, '').replace(',', '.'));
    if (!Number.isFinite(value)) return { kind: 'unreadable', reason: `"${number}" is not a number` };
    const word = match?.groups?.unit?.toLowerCase();
    if (word !== undefined && word !== 'g' && word !== 'kg') return { kind: 'unreadable', reason: `the unit "${word}" is neither g nor kg` };
    const unit = (word as ScaleUnit | undefined) ?? rules.defaultUnit;
    // zero or less is the empty platform or a tare, not a pack
    return value > 0 ? { kind: 'weight', value, unit } : { kind: 'empty', value, unit };
  };
}

/** A weight in another unit, rounded to the micro-unit so 0.5023 kg gives 502.3 g exactly as typed. */
export function inUnit(value: number, from: ScaleUnit, to: ScaleUnit): number {
  if (from === to) return value;
  const converted = from === 'kg' ? value * 1000 : value / 1000;
  return Math.round(converted * 1e6) / 1e6;
}
