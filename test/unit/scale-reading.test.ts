import { describe, expect, it } from 'vitest';
import { inUnit, patternProblem, readingReader } from '../../server/scales/reading.js';

// The lines below are written for this test in the shapes bench scales commonly print (a status
// word, a sign, a zero-padded number, a unit): common practice, no source.
describe('reading a scale’s line', () => {
  const byDefault = readingReader({ pattern: null, unstablePattern: null, defaultUnit: 'g' });

  it('when a line carries a number with or without a unit, then the first signed decimal is the weight, with either decimal mark', () => {
    expect(byDefault('ST,GS,+0000502.3 g\r\n')).toEqual({ kind: 'weight', value: 502.3, unit: 'g' });
    expect(byDefault('  502,3g')).toEqual({ kind: 'weight', value: 502.3, unit: 'g' });
    expect(byDefault('N + 1,0042 kg')).toEqual({ kind: 'weight', value: 1.0042, unit: 'kg' });
    expect(byDefault('0.998 KG')).toEqual({ kind: 'weight', value: 0.998, unit: 'kg' });
    expect(byDefault('503')).toEqual({ kind: 'weight', value: 503, unit: 'g' }); // no unit: the profile's
    expect(readingReader({ pattern: null, unstablePattern: null, defaultUnit: 'kg' })('1.013')).toEqual({ kind: 'weight', value: 1.013, unit: 'kg' });
  });

  it('when a line is unstable, empty, has no number, is garbled or names another unit, then it is not a weight and says why', () => {
    const withMarker = readingReader({ pattern: null, unstablePattern: '^US', defaultUnit: 'g' });
    expect(withMarker('US,GS,+0000498.1 g')).toEqual({ kind: 'unstable' });
    expect(withMarker('ST,GS,+0000498.1 g')).toEqual({ kind: 'weight', value: 498.1, unit: 'g' });
    expect(byDefault('ST,GS,-0000000.4 g')).toEqual({ kind: 'empty', value: -0.4, unit: 'g' });
    expect(byDefault('ST,GS,+0000000.0 g')).toMatchObject({ kind: 'empty' });
    expect(byDefault('OVERLOAD')).toEqual({ kind: 'unreadable', reason: 'no weight in the line' });
    expect(byDefault('')).toEqual({ kind: 'unreadable', reason: 'no weight in the line' });
    expect(byDefault('S\u0000T\u0013+05\u007f02.3 g')).toMatchObject({ kind: 'unreadable', reason: expect.stringMatching(/^garbled/) });
    expect(byDefault('\ufffd\ufffd502.3 g')).toMatchObject({ kind: 'unreadable', reason: expect.stringMatching(/^garbled/) });
    expect(byDefault('1.106 lb')).toEqual({ kind: 'unreadable', reason: 'the unit "lb" is neither g nor kg' });
  });

  it('when the profile gives its own pattern, then its named groups are read', () => {
    const own = readingReader({ pattern: String.raw`^W(?<weight>\d+\.\d+)(?<unit>kg|g)?;`, unstablePattern: null, defaultUnit: 'kg' });
    expect(own('W0.5031;S1')).toEqual({ kind: 'weight', value: 0.5031, unit: 'kg' });
    expect(own('W502.90g;S1')).toEqual({ kind: 'weight', value: 502.9, unit: 'g' });
    expect(own('502.9 g')).toEqual({ kind: 'unreadable', reason: 'no weight in the line' });
  });

  it('when a pattern does not compile or names no weight group, then the problem is said in words', () => {
    expect(patternProblem('(?<weight>\\d+')).toMatch(/^not a regular expression/);
    expect(patternProblem('\\d+ g')).toBe('needs a named group (?<weight>…) for the number');
    expect(patternProblem('(?<weight>\\d+)')).toBeNull();
  });

  it('when a weight is converted, then g and kg give back what the scale showed', () => {
    expect(inUnit(0.5023, 'kg', 'g')).toBe(502.3);
    expect(inUnit(1013, 'g', 'kg')).toBe(1.013);
    expect(inUnit(502.3, 'g', 'g')).toBe(502.3);
  });
});
