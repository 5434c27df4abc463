/**
 * undeclared-state: a name that no entry of "states" declares leaves episodes that reach it with no
 * next state (common practice: every referenced state id must be declared).
 */
import { expect } from 'vitest';
import { testRule } from '../helpers/rule-tester';
import { chainSpec, chainWith, findingsOf } from '../helpers/specs';

const RULE = 'undeclared-state';

const misspelt = chainSpec({
  transitions: [
    { from: 'a', action: 'go', to: 'bb', reward: -1 },
    { from: 'b', action: 'go', to: 'goal' },
  ],
});

testRule(RULE, {
  valid: [
    {
      name: 'a spec whose names are all declared',
      spec: chainSpec({ start: ['a', 'b'], shaping: { potential: { a: 1 } } }),
    },
    {
      name: 'no state could be read at all (the schema finding covers it)',
      spec: chainSpec({ states: [] }),
      check: (report) =>
        expect(findingsOf(report, 'schema').map((f) => f.message)).toContain(
          'states must be an object, not a list (Every state, keyed by its id)',
        ),
    },
    {
      name: 'switched off by the config',
      spec: chainSpec({ start: 'nowhere' }),
      config: { rules: { [RULE]: 'off' } },
      check: (report) => expect(report.model).toBeUndefined(),
    },
  ],
  invalid: [
    {
      name: 'a misspelt target: suggests the declared id, offers to rename or declare, and the model is not compiled',
      spec: misspelt,
      findings: [
        {
          at: '"bb"',
          severity: 'error',
          message: `transitions[0] ('a' --go-->) leads to 'bb', which is not declared in "states" (did you mean 'b'?): episodes that take it have no next state, so the MDP is undefined and no values are computed`,
          fixes: [`Change to 'b'`, `Declare the state 'bb'`],
        },
      ],
      check: (report) => expect(report.model).toBeUndefined(),
      afterFix: (fixed, title) => {
        if (title === `Change to 'b'`) expect(fixed.model).toBeDefined();
        else expect(JSON.parse(fixed.text).states).toEqual({ a: {}, b: {}, goal: { terminal: 'goal' }, bb: {} });
      },
    },
    {
      name: 'an undeclared from, start and potential key, each at its own text',
      spec: chainWith([{ from: 'c', action: 'go', to: 'goal' }], {
        start: { a: 0.5, z: 0.5 },
        shaping: { potential: { qq: 1 } },
      }),
      // In document order: start, transitions, then shaping (JSON.stringify appends the new key).
      findings: [
        { at: '"z"', message: /^the start names 'z', which is not declared/ },
        // No declared id is close to these: no rename is offered, only the declaration.
        { at: '"c"', message: /^transitions\[2\] leaves 'c'/, fixes: [`Declare the state 'c'`] },
        { at: '"qq"', message: /^shaping\.potential names 'qq'/ },
      ],
    },
    {
      name: 'once per written name, also in map and list outcomes and in a from list',
      spec: chainWith(
        [
          { from: ['a', 'x'], action: ['go', 'go2'], to: { goal: 0.5, y: 0.5 } },
          { from: 'b', action: 'go2', to: [{ state: 'w', probability: 1 }] },
        ],
        { actions: ['go', 'go2'] },
      ),
      findings: [{ at: '"x"' }, { at: '"y"' }, { at: '"w"' }],
    },
  ],
});
