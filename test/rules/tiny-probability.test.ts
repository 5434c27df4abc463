import { describe, expect, it } from 'vitest';
import { chainSpec, checkSpec, findingsOf, spanText } from '../helpers/specs';

const RULE = 'tiny-probability';

const withCrash = (p: number) =>
  chainSpec({
    states: { a: {}, b: {}, goal: { terminal: 'goal' }, crash: { terminal: 'failure' } },
    transitions: [
      { from: 'a', action: 'go', to: { b: 1 - p, crash: p } },
      { from: 'b', action: 'go', to: 'goal' },
    ],
  });

describe('tiny-probability', () => {
  it('fires at a positive probability below 1e-12, as info, and the spec still compiles', () => {
    const report = checkSpec(withCrash(1e-15));
    const [finding, ...rest] = findingsOf(report, RULE);
    expect(rest).toEqual([]);
    expect(finding.severity).toBe('info');
    expect(spanText(report, finding)).toBe('1e-15');
    expect(finding.message).toBe(
      `the probability 1e-15 of 'crash' after transitions[0] ('a' --go-->) is below 1e-12: the outcome changes no value by more than 1e-15 times its reward, and no learner will see it; check the exponent, or write 0 if it cannot happen`,
    );
    expect(report.model).toBeDefined();
  });

  it('honours a configured minimum', () => {
    expect(findingsOf(checkSpec(withCrash(1e-9)), RULE)).toEqual([]);
    const report = checkSpec(withCrash(1e-9), { thresholds: { 'tiny-probability.minimum': 1e-6 } });
    expect(findingsOf(report, RULE)).toHaveLength(1);
    expect(findingsOf(report, RULE)[0].message).toContain('is below 1e-6');
  });

  it('does not fire at 0, at the threshold, or above it', () => {
    expect(findingsOf(checkSpec(withCrash(0)), RULE)).toEqual([]);
    expect(findingsOf(checkSpec(withCrash(1e-12)), RULE)).toEqual([]);
    expect(findingsOf(checkSpec(withCrash(0.01)), RULE)).toEqual([]);
  });
});
