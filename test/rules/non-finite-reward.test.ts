import { describe, expect, it } from 'vitest';
import { chainSpec, checkSpec, findingsOf, spanText, specText } from '../helpers/specs';

const RULE = 'non-finite-reward';

describe('non-finite-reward', () => {
  it('fires at a reward literal too large for a 64-bit float, and the spec is not compiled', () => {
    const text = specText(chainSpec()).replace('"reward": 10', '"reward": -1e400');
    const report = checkSpec(text);
    const [finding, ...rest] = findingsOf(report, RULE);
    expect(rest).toEqual([]);
    expect(finding.severity).toBe('error');
    expect(spanText(report, finding)).toBe('-1e400');
    expect(finding.message).toBe(
      `the reward of transitions[1] ('b' --go-->) toward 'goal' is -infinity (the number is too large for a 64-bit float): every return that can include it is undefined, so the spec is not compiled`,
    );
    expect(report.model).toBeUndefined();
    // The schema does not report the same number again.
    expect(findingsOf(report, 'schema')).toEqual([]);
  });

  it('names the term, reports an outcome reward once even with a from list, and speaks of costs under minimize', () => {
    const spec = chainSpec({
      objective: 'minimize',
      transitions: [{ from: ['a', 'b'], action: 'go', to: [{ state: 'goal', probability: 1, reward: { fuel: 7 } }] }],
    });
    const report = checkSpec(specText(spec).replace('"fuel": 7', '"fuel": 2e308'));
    const findings = findingsOf(report, RULE);
    expect(findings).toHaveLength(1);
    expect(findings[0].message).toMatch(/^the cost \(term 'fuel'\) of transitions\[0\] \('a' --go--> and 1 more pair\) toward 'goal' is infinity/);
  });

  it('fires at an infinite shaping potential', () => {
    const report = checkSpec(specText(chainSpec({ shaping: { potential: { b: 3 } } })).replace('"b": 3', '"b": 1e999'));
    const [finding] = findingsOf(report, RULE);
    expect(spanText(report, finding)).toBe('1e999');
    expect(finding.message).toMatch(/^the shaping potential of 'b' is infinity .*every shaping reward into or out of 'b' is undefined/);
  });

  it('does not fire on finite rewards, however large', () => {
    expect(findingsOf(checkSpec(chainSpec()), RULE)).toEqual([]);
    expect(findingsOf(checkSpec(specText(chainSpec()).replace('"reward": 10', '"reward": 1.7e308')), RULE)).toEqual([]);
  });
});
