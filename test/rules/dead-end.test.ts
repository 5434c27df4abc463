/**
 * dead-end: a non-terminal state that offers no action leaves the MDP undefined there (common
 * practice: every non-terminal state needs at least one action), so the spec is not compiled.
 */
import { expect } from 'vitest';
import { testRule } from '../helpers/rule-tester';
import { chainSpec } from '../helpers/specs';

const emptyB = chainSpec({
  states: { a: {}, b: { actions: [] }, goal: { terminal: 'goal' } },
  transitions: [{ from: 'a', action: 'go', to: 'b' }],
});

testRule('dead-end', {
  valid: [
    { name: 'the chain: every non-terminal state has the default actions', spec: chainSpec() },
    {
      name: 'each state declares its own actions',
      spec: chainSpec({
        actions: undefined,
        states: { a: { actions: ['go'] }, b: { actions: ['go'] }, goal: { terminal: 'goal' } },
      }),
    },
  ],
  invalid: [
    {
      name: 'a non-terminal state whose action list is empty, with a fix per terminal kind',
      spec: emptyB,
      findings: [
        {
          at: '"b"',
          severity: 'error',
          message: `'b' is not terminal but offers no action (its "actions" list is empty): an episode that enters it can neither continue nor end, so the MDP is undefined there and the spec is not compiled`,
          related: ['[]'],
          fixes: [`Mark 'b' as a goal terminal`, `Mark 'b' as a failure terminal`, `Mark 'b' as a neutral terminal`],
        },
      ],
      check: (report) => expect(report.model).toBeUndefined(),
      afterFix: (fixed, title) => {
        expect(fixed.model, title).toBeDefined();
        const kind = /as a (\w+) terminal/.exec(title)![1];
        expect(JSON.parse(fixed.text).states.b).toEqual({ actions: [], terminal: kind });
      },
    },
    {
      name: 'neither the states nor the spec declare actions: once, at the spec',
      spec: chainSpec({ actions: undefined }),
      findings: [
        {
          at: '{',
          message: `no state offers an action: neither the spec nor any state declares "actions" (the transitions use 'go'), so all 2 non-terminal states are dead ends and the spec is not compiled; give the spec a default "actions" list (or each state its own)`,
          fixes: ['Declare "actions": ["go"]'],
        },
      ],
      // The transitions are not also reported as using undeclared actions.
      check: (report) => expect(report.findings.filter((f) => f.rule === 'undeclared-action')).toEqual([]),
      afterFix: (fixed) => {
        expect(fixed.findings).toEqual([]);
        expect(fixed.model).toBeDefined();
      },
    },
    {
      name: 'some state declares actions and another has none: per state',
      spec: chainSpec({ actions: undefined, states: { a: { actions: ['go'] }, b: {}, goal: { terminal: 'goal' } } }),
      findings: [{ at: '"b"', message: /\(neither it nor the spec declares "actions"\)/ }],
    },
  ],
});
