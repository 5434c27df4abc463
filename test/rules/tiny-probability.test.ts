/**
 * tiny-probability: a positive probability below 1e-12 changes no value by more than that share of
 * its reward (common practice: such a number is usually a mistyped exponent).
 */
import { expect } from 'vitest';
import { testRule } from '../helpers/rule-tester';
import { chainSpec } from '../helpers/specs';

const withCrash = (p: number) =>
  chainSpec({
    states: { a: {}, b: {}, goal: { terminal: 'goal' }, crash: { terminal: 'failure' } },
    transitions: [
      { from: 'a', action: 'go', to: { b: 1 - p, crash: p } },
      { from: 'b', action: 'go', to: 'goal' },
    ],
  });

testRule('tiny-probability', {
  valid: [
    { name: 'probability 0', spec: withCrash(0) },
    { name: 'exactly the threshold 1e-12', spec: withCrash(1e-12) },
    { name: 'above the threshold', spec: withCrash(0.01) },
    { name: '1e-9 with the default minimum', spec: withCrash(1e-9) },
  ],
  invalid: [
    {
      name: 'a positive probability below 1e-12, as info; the spec still compiles',
      spec: withCrash(1e-15),
      findings: [
        {
          at: '1e-15',
          severity: 'info',
          message: `the probability 1e-15 of 'crash' after transitions[0] ('a' --go-->) is below 1e-12: the outcome changes no value by more than 1e-15 times its reward, and no learner will see it; check the exponent, or write 0 if it cannot happen`,
        },
      ],
      check: (report) => expect(report.model).toBeDefined(),
    },
    {
      name: 'a configured minimum',
      spec: withCrash(1e-9),
      config: { thresholds: { 'tiny-probability.minimum': 1e-6 } },
      findings: [{ says: ['is below 1e-6'] }],
    },
  ],
});
