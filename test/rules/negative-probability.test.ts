/**
 * negative-probability: a probability below 0 or above 1 matches no distribution (Kolmogorov's
 * axioms), so the spec is not compiled.
 */
import { expect } from 'vitest';
import { testRule } from '../helpers/rule-tester';
import { chainSpec } from '../helpers/specs';

const withOutcomes = (to: unknown) =>
  chainSpec({
    transitions: [
      { from: 'a', action: 'go', to },
      { from: 'b', action: 'go', to: 'goal' },
    ],
  });

testRule('negative-probability', {
  valid: [
    { name: 'probabilities 0 and 1', spec: withOutcomes({ b: 0, goal: 1 }) },
    {
      name: 'probabilities strictly between 0 and 1',
      spec: withOutcomes([
        { state: 'b', probability: 0.999 },
        { state: 'goal', probability: 0.001 },
      ]),
    },
  ],
  invalid: [
    {
      name: 'each probability below 0 or above 1, once per written number',
      spec: withOutcomes({ b: 1.1, goal: -0.1 }),
      findings: [
        {
          at: '1.1',
          severity: 'error',
          message: `the probability 1.1 of 'b' after transitions[0] ('a' --go-->) is above 1: no distribution matches it, so the spec is not compiled`,
        },
        {
          at: '-0.1',
          severity: 'error',
          message: `the probability -0.1 of 'goal' after transitions[0] ('a' --go-->) is below 0: no distribution matches it, so the spec is not compiled`,
        },
      ],
      check: (report) => expect(report.model).toBeUndefined(),
    },
    {
      name: 'a whole number up to 100 read as a likely percentage',
      spec: withOutcomes([
        { state: 'b', probability: 80 },
        { state: 'goal', probability: 20 },
      ]),
      findings: [{ message: /is above 1 \(if it is a percentage, write 0\.8\)/ }, {}],
    },
    {
      name: 'a literal too large to represent',
      spec: JSON.stringify(withOutcomes({ b: 0.5, goal: 0.5 }), null, 2).replace('"goal": 0.5', '"goal": 1e400'),
      findings: [{ at: '1e400', message: /the probability infinity \(the number is too large to represent\)/ }],
    },
    {
      name: 'a start probability out of range, at its value',
      spec: chainSpec({ start: { a: 1.5, b: -0.5 } }),
      findings: [{ at: '1.5' }, { at: '-0.5' }],
      // probability-sum stays quiet until the numbers are probabilities.
      check: (report) => expect(report.findings.filter((f) => f.rule === 'probability-sum')).toEqual([]),
    },
  ],
});
