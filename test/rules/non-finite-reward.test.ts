/**
 * non-finite-reward: a reward or potential that is not a finite 64-bit float (IEEE 754) makes every
 * return that can include it undefined, so the spec is not compiled.
 */
import { expect } from 'vitest';
import { testRule } from '../helpers/rule-tester';
import { chainSpec, specText } from '../helpers/specs';

testRule('non-finite-reward', {
  valid: [
    { name: "the chain's finite rewards", spec: chainSpec() },
    {
      name: 'a finite reward, however large (1.7e308)',
      spec: specText(chainSpec()).replace('"reward": 10', '"reward": 1.7e308'),
    },
  ],
  invalid: [
    {
      name: 'a reward literal too large for a 64-bit float',
      spec: specText(chainSpec()).replace('"reward": 10', '"reward": -1e400'),
      findings: [
        {
          at: '-1e400',
          severity: 'error',
          message: `the reward of transitions[1] ('b' --go-->) toward 'goal' is -infinity (the number is too large for a 64-bit float): every return that can include it is undefined, so the spec is not compiled`,
        },
      ],
      check: (report) => {
        expect(report.model).toBeUndefined();
        // The schema does not report the same number again.
        expect(report.findings.filter((f) => f.rule === 'schema')).toEqual([]);
      },
    },
    {
      name: 'the term is named, an outcome reward with a from list is reported once, and costs under minimize',
      spec: specText(
        chainSpec({
          objective: 'minimize',
          transitions: [
            { from: ['a', 'b'], action: 'go', to: [{ state: 'goal', probability: 1, reward: { fuel: 7 } }] },
          ],
        }),
      ).replace('"fuel": 7', '"fuel": 2e308'),
      findings: [
        {
          message:
            /^the cost \(term 'fuel'\) of transitions\[0\] \('a' --go--> and 1 more pair\) toward 'goal' is infinity/,
        },
      ],
    },
    {
      name: "a transition's reward shared by its outcomes is reported once, also with an outcome of its own reward between them",
      spec: specText(
        chainSpec({
          transitions: [
            {
              from: 'a',
              action: 'go',
              reward: 5,
              to: [
                { state: 'b', probability: 0.5 },
                { state: 'goal', probability: 0.3, reward: 1 },
                { state: 'a', probability: 0.2 },
              ],
            },
          ],
        }),
      ).replace('"reward": 5', '"reward": 1e400'),
      findings: [{ at: '1e400', message: /^the reward of transitions\[0\] \('a' --go-->\) toward 'b' is infinity/ }],
    },
    {
      name: 'an infinite shaping potential',
      spec: specText(chainSpec({ shaping: { potential: { b: 3 } } })).replace('"b": 3', '"b": 1e999'),
      findings: [
        {
          at: '1e999',
          message: /^the shaping potential of 'b' is infinity .*every shaping reward into or out of 'b' is undefined/,
        },
      ],
    },
  ],
});
