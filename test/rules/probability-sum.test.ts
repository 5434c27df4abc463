import { describe, expect, it } from 'vitest';
import { applyFix, chainSpec, checkSpec, findingsOf, spanText } from '../helpers/specs';

const RULE = 'probability-sum';

const withRoof = (to: unknown) =>
  chainSpec({
    actions: ['go'],
    transitions: [
      { from: 'a', action: 'go', to },
      { from: 'b', action: 'go', to: 'goal' },
    ],
  });

describe('probability-sum', () => {
  it('fires at the outcomes that add up to less than 1, saying what share has no outcome', () => {
    const report = checkSpec(withRoof({ b: 0.5, goal: 0.4 }));
    const [finding, ...rest] = findingsOf(report, RULE);
    expect(rest).toEqual([]);
    expect(finding.severity).toBe('error');
    expect(spanText(report, finding).replace(/\s+/g, ' ')).toBe('{ "b": 0.5, "goal": 0.4 }');
    expect(finding.message).toBe(
      `the outcome probabilities of transitions[0] ('a' --go-->) add up to 0.9, not 1: 0.1 of the episodes that take it have no defined next state, so the spec is not compiled`,
    );
    expect(report.model).toBeUndefined();
  });

  it('fires when they add up to more than 1 (list form)', () => {
    const report = checkSpec(withRoof([{ state: 'b', probability: 0.7 }, { state: 'goal', probability: 0.7 }]));
    const [finding] = findingsOf(report, RULE);
    expect(finding.message).toMatch(/add up to 1\.4, not 1: they claim 0\.4 more than certainty/);
  });

  it('normalises with its fix, keeping the ratios, after which the spec compiles', () => {
    const report = checkSpec(withRoof({ b: 0.3, goal: 0.6 }));
    const [finding] = findingsOf(report, RULE);
    expect(finding.fixes?.map((f) => f.title)).toEqual(['Normalise the probabilities (divide each by their sum)']);
    const fixedText = applyFix(report, finding.fixes![0].edits);
    expect(JSON.parse(fixedText).transitions[0].to).toEqual({ b: 0.333333333333, goal: 0.666666666667 });
    const fixed = checkSpec(fixedText);
    expect(findingsOf(fixed, RULE)).toEqual([]);
    expect(fixed.model).toBeDefined();
  });

  it('checks a start map too', () => {
    const report = checkSpec(chainSpec({ start: { a: 0.2, b: 0.2 } }));
    const [finding] = findingsOf(report, RULE);
    expect(spanText(report, finding).replace(/\s+/g, ' ')).toBe('{ "a": 0.2, "b": 0.2 }');
    expect(finding.message).toBe('the start probabilities add up to 0.4, not 1: 0.6 of the episodes have no start state, so the spec is not compiled');
  });

  it('tolerates rounding within 1e-9 but not beyond, and shows a near-1 sum in full', () => {
    // 0.1 + 0.2 + 0.7 is 1.0000000000000002 in binary floating point.
    expect(findingsOf(checkSpec(withRoof({ a: 0.1, b: 0.2, goal: 0.7 })), RULE)).toEqual([]);
    expect(findingsOf(checkSpec(withRoof({ b: 0.5, goal: 0.5 + 5e-10 })), RULE)).toEqual([]);
    const off = findingsOf(checkSpec(withRoof({ b: 0.5, goal: 0.5 + 2e-9 })), RULE);
    expect(off).toHaveLength(1);
    expect(off[0].message).toContain('add up to 1.000000002, not 1');
  });

  it('reports a transition with a from list once', () => {
    const report = checkSpec(chainSpec({ transitions: [{ from: ['a', 'b'], action: 'go', to: { goal: 0.5 } }] }));
    const findings = findingsOf(report, RULE);
    expect(findings).toHaveLength(1);
    expect(findings[0].message).toContain("transitions[0] ('a' --go--> and 1 more pair)");
  });

  it('does not fire on valid distributions, on probabilities out of range, or on unreadable outcomes', () => {
    expect(findingsOf(checkSpec(chainSpec()), RULE)).toEqual([]);
    expect(findingsOf(checkSpec(withRoof({ b: 0.25, goal: 0.75 })), RULE)).toEqual([]);
    const outOfRange = checkSpec(withRoof({ b: 1.5, goal: -0.5 }));
    expect(findingsOf(outOfRange, RULE)).toEqual([]);
    expect(findingsOf(outOfRange, 'negative-probability')).toHaveLength(2);
    const unreadable = checkSpec(withRoof([{ state: 'b' }, { state: 'goal', probability: 0.5 }]));
    expect(findingsOf(unreadable, RULE)).toEqual([]);
    expect(findingsOf(unreadable, 'schema')).toHaveLength(1);
  });
});
