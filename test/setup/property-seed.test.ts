import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { propertySeed } from './property-seed';

describe('the suite-wide fast-check seed', () => {
  it('is fixed unless asked otherwise, replays an integer, and refuses anything else', () => {
    expect(propertySeed(undefined)).toBe(propertySeed(''));
    expect(propertySeed('42')).toBe(42);
    expect(Number.isInteger(propertySeed('random'))).toBe(true);
    expect(() => propertySeed('soon')).toThrow('EPISCOPE_PROPERTY_SEED must be an integer or "random", not "soon"');
  });

  it('is in force in test files, so two samples of the same arbitrary agree', () => {
    expect(fc.readConfigureGlobal().seed).toBe(propertySeed(process.env.EPISCOPE_PROPERTY_SEED));
    const draw = () => fc.sample(fc.integer(), { numRuns: 5 });
    expect(draw()).toEqual(draw());
  });

  it('is named in the error of a failing property', () => {
    const seed = fc.readConfigureGlobal().seed as number;
    expect(() => fc.assert(fc.property(fc.nat(), (n) => n < 0))).toThrow(`seed: ${seed}`);
  });
});
