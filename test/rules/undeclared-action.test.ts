/**
 * undeclared-action: a transition for an action its state does not offer can never be taken (common
 * practice: the action set of each state bounds what a policy may choose).
 */
import { expect } from 'vitest';
import { testRule } from '../helpers/rule-tester';
import { chainSpec, chainWith, findingsOf } from '../helpers/specs';

testRule('undeclared-action', {
  valid: [
    { name: 'offered actions', spec: chainSpec() },
    {
      // Out of a terminal: terminal-has-transitions; undeclared from: undeclared-state; no actions: dead-end.
      name: 'terminal or undeclared from states, or states without actions',
      spec: chainWith(
        [
          { from: 'goal', action: 'fly', to: 'a' },
          { from: 'nowhere', action: 'fly', to: 'a' },
          { from: 'c', action: 'fly', to: 'a' },
        ],
        {
          states: { a: {}, b: {}, c: { actions: [] }, goal: { terminal: 'goal' } },
        },
      ),
      check: (report) => {
        expect(findingsOf(report, 'terminal-has-transitions')).toHaveLength(1);
        expect(findingsOf(report, 'undeclared-state')).toHaveLength(1);
        expect(findingsOf(report, 'dead-end')).toHaveLength(1);
      },
    },
  ],
  invalid: [
    {
      name: 'a misspelt action, suggesting the offered one; renaming removes it',
      spec: chainSpec({
        actions: ['go', 'wait'],
        transitions: [
          { from: 'a', action: 'og', to: 'b' },
          { from: 'a', action: 'wait', to: 'a' },
          { from: 'b', action: 'go', to: 'goal' },
          { from: 'b', action: 'wait', to: 'b' },
        ],
      }),
      findings: [
        {
          at: '"og"',
          severity: 'error',
          message: `'og' is not an action of 'a' (it offers 'go' and 'wait') (did you mean 'go'?): no policy can take it there, so transitions[0] is never used and the spec is not compiled until the action is offered or renamed`,
        },
      ],
      check: (report, [finding]) => {
        expect(report.model).toBeUndefined();
        expect(finding.fixes?.length).toBeGreaterThan(0);
      },
      afterFix: (fixed, title) => expect(fixed.model, title).toBeDefined(),
    },
    {
      name: 'a state that narrowed its set, offering to add the action back',
      spec: chainSpec({
        actions: ['go', 'wait'],
        states: { a: { actions: ['go'] }, b: { actions: ['go'] }, goal: { terminal: 'goal' } },
        transitions: [
          { from: 'a', action: 'go', to: 'b' },
          { from: 'a', action: 'wait', to: 'a' },
          { from: 'b', action: 'go', to: 'goal' },
        ],
      }),
      findings: [
        {
          at: '"wait"',
          message: /^'wait' is not an action of 'a' \(it offers 'go'\): /,
          related: [JSON.stringify(['go'], null, 2).replace(/\n/g, '\n      ')],
        },
      ],
      check: (_report, [finding]) =>
        expect(finding.fixes?.map((f) => f.title)).toContain(`Add 'wait' to the actions of 'a'`),
      afterFix: (fixed, title) => {
        if (title !== `Add 'wait' to the actions of 'a'`) return;
        expect(JSON.parse(fixed.text).states.a.actions).toEqual(['go', 'wait']);
        expect(fixed.model).toBeDefined();
      },
    },
    {
      name: 'a from list, once per written action, naming every state that lacks it',
      spec: chainWith([{ from: ['a', 'b'], action: 'jump', to: 'goal' }]),
      findings: [{ message: /^'jump' is not an action of 'a' and 'b': / }],
    },
  ],
});
