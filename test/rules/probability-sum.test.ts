/**
 * probability-sum: the outcome probabilities of a transition (or the start map) must add up to 1 to
 * be a distribution (Kolmogorov's axioms); a rounding tolerance of 1e-9 is common practice.
 */
import { expect } from 'vitest';
import { testRule } from '../helpers/rule-tester';
import { chainSpec, findingsOf, spanText } from '../helpers/specs';

const withRoof = (to: unknown) =>
  chainSpec({
    actions: ['go'],
    transitions: [
      { from: 'a', action: 'go', to },
      { from: 'b', action: 'go', to: 'goal' },
    ],
  });

testRule('probability-sum', {
  valid: [
    { name: 'the chain', spec: chainSpec() },
    { name: 'a valid distribution', spec: withRoof({ b: 0.25, goal: 0.75 }) },
    // 0.1 + 0.2 + 0.7 is 1.0000000000000002 in binary floating point.
    { name: 'rounding: 0.1 + 0.2 + 0.7', spec: withRoof({ a: 0.1, b: 0.2, goal: 0.7 }) },
    { name: 'rounding within 1e-9', spec: withRoof({ b: 0.5, goal: 0.5 + 5e-10 }) },
    {
      name: 'probabilities out of range (negative-probability reports them)',
      spec: withRoof({ b: 1.5, goal: -0.5 }),
      check: (report) => expect(findingsOf(report, 'negative-probability')).toHaveLength(2),
    },
    {
      name: 'an unreadable outcome (the schema reports it)',
      spec: withRoof([{ state: 'b' }, { state: 'goal', probability: 0.5 }]),
      check: (report) => expect(findingsOf(report, 'schema')).toHaveLength(1),
    },
  ],
  invalid: [
    {
      name: 'outcomes that add up to less than 1, saying what share has no outcome',
      spec: withRoof({ b: 0.5, goal: 0.4 }),
      findings: [
        {
          severity: 'error',
          message: `the outcome probabilities of transitions[0] ('a' --go-->) add up to 0.9, not 1: 0.1 of the episodes that take it have no defined next state, so the spec is not compiled`,
        },
      ],
      check: (report, [finding]) => {
        expect(spanText(report, finding).replace(/\s+/g, ' ')).toBe('{ "b": 0.5, "goal": 0.4 }');
        expect(report.model).toBeUndefined();
      },
    },
    {
      name: 'they add up to more than 1 (list form)',
      spec: withRoof([
        { state: 'b', probability: 0.7 },
        { state: 'goal', probability: 0.7 },
      ]),
      findings: [{ message: /add up to 1\.4, not 1: they claim 0\.4 more than certainty/ }],
    },
    {
      name: 'its fix normalises, keeping the ratios, after which the spec compiles',
      spec: withRoof({ b: 0.3, goal: 0.6 }),
      findings: [{ fixes: ['Normalise the probabilities (divide each by their sum)'] }],
      afterFix: (fixed) => {
        expect(JSON.parse(fixed.text).transitions[0].to).toEqual({ b: 0.333333333333, goal: 0.666666666667 });
        expect(fixed.model).toBeDefined();
      },
    },
    {
      name: 'a start map',
      spec: chainSpec({ start: { a: 0.2, b: 0.2 } }),
      findings: [
        {
          message:
            'the start probabilities add up to 0.4, not 1: 0.6 of the episodes have no start state, so the spec is not compiled',
        },
      ],
      check: (report, [finding]) =>
        expect(spanText(report, finding).replace(/\s+/g, ' ')).toBe('{ "a": 0.2, "b": 0.2 }'),
    },
    {
      name: 'rounding beyond 1e-9, with a near-1 sum shown in full',
      spec: withRoof({ b: 0.5, goal: 0.5 + 2e-9 }),
      findings: [{ says: ['add up to 1.000000002, not 1'] }],
    },
    {
      name: 'a transition with a from list, once',
      spec: chainSpec({ transitions: [{ from: ['a', 'b'], action: 'go', to: { goal: 0.5 } }] }),
      findings: [{ says: ["transitions[0] ('a' --go--> and 1 more pair)"] }],
    },
  ],
});
