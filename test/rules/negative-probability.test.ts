import { describe, expect, it } from 'vitest';
import { chainSpec, checkSpec, findingsOf, spanText } from '../helpers/specs';

const RULE = 'negative-probability';

const withOutcomes = (to: unknown) =>
  chainSpec({ transitions: [{ from: 'a', action: 'go', to }, { from: 'b', action: 'go', to: 'goal' }] });

describe('negative-probability', () => {
  it('fires at each probability below 0 or above 1, once per written number', () => {
    const report = checkSpec(withOutcomes({ b: 1.1, goal: -0.1 }));
    const findings = findingsOf(report, RULE);
    expect(findings.map((f) => spanText(report, f))).toEqual(['1.1', '-0.1']);
    expect(findings[0].message).toBe(`the probability 1.1 of 'b' after transitions[0] ('a' --go-->) is above 1: no distribution matches it, so the spec is not compiled`);
    expect(findings[1].message).toBe(`the probability -0.1 of 'goal' after transitions[0] ('a' --go-->) is below 0: no distribution matches it, so the spec is not compiled`);
    expect(findings.every((f) => f.severity === 'error')).toBe(true);
    expect(report.model).toBeUndefined();
  });

  it('reads a whole number up to 100 as a likely percentage', () => {
    const report = checkSpec(withOutcomes([{ state: 'b', probability: 80 }, { state: 'goal', probability: 20 }]));
    const findings = findingsOf(report, RULE);
    expect(findings).toHaveLength(2);
    expect(findings[0].message).toContain('is above 1 (if it is a percentage, write 0.8)');
  });

  it('explains a literal too large to represent', () => {
    const text = JSON.stringify(withOutcomes({ b: 0.5, goal: 0.5 }), null, 2).replace('"goal": 0.5', '"goal": 1e400');
    const report = checkSpec(text);
    const [finding] = findingsOf(report, RULE);
    expect(spanText(report, finding)).toBe('1e400');
    expect(finding.message).toContain('the probability infinity (the number is too large to represent)');
  });

  it('fires for a start probability out of range, at its value', () => {
    const report = checkSpec(chainSpec({ start: { a: 1.5, b: -0.5 } }));
    expect(findingsOf(report, RULE).map((f) => spanText(report, f))).toEqual(['1.5', '-0.5']);
    // probability-sum stays quiet until the numbers are probabilities.
    expect(findingsOf(report, 'probability-sum')).toEqual([]);
  });

  it('does not fire on 0, 1 or anything between', () => {
    expect(findingsOf(checkSpec(withOutcomes({ b: 0, goal: 1 })), RULE)).toEqual([]);
    expect(findingsOf(checkSpec(withOutcomes([{ state: 'b', probability: 0.999 }, { state: 'goal', probability: 0.001 }])), RULE)).toEqual([]);
  });
});
