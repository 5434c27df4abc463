/**
 * missing-outcomes: an action a state offers with no transition for it leaves the MDP undefined
 * there (common practice: every offered action needs a next-state distribution).
 */
import { expect } from 'vitest';
import type { FileReport } from '../../server/src/analyze';
import { testRule } from '../helpers/rule-tester';
import { chainSpec, findingsOf } from '../helpers/specs';

const messagesOf = (report: FileReport, rule: string) => findingsOf(report, rule).map((f) => f.message);

testRule('missing-outcomes', {
  valid: [
    { name: 'terminals and complete states', spec: chainSpec() },
    {
      name: 'a transition of a from list or action list defines the pair',
      spec: chainSpec({
        actions: ['go', 'wait'],
        transitions: [{ from: ['a', 'b'], action: ['go', 'wait'], to: 'goal' }],
      }),
      check: (report) => expect(report.model).toBeDefined(),
    },
    {
      name: 'a transition whose from or action is misspelt: the schema finding is not repeated',
      spec: chainSpec({
        transitions: [
          { form: 'a', action: 'go', to: 'b' },
          { from: 'b', acton: 'go', to: 'goal' },
        ],
      }),
      check: (report) => {
        expect(messagesOf(report, 'schema')).toEqual([
          'unknown property "form" in transitions[0]; did you mean "from"? It is required (the state (or list of states) the transition leaves)',
          'unknown property "acton" in transitions[1]; did you mean "action"? It is required (the action (or list of actions) taken)',
        ]);
        expect(report.notAnalysed).toBe('2 transitions could not be read (no readable "from" or "action")');
      },
    },
    {
      name: 'a state whose terminal kind is misspelt (it was meant to be terminal)',
      spec: chainSpec({ states: { a: {}, b: {}, goal: { terminal: 'gaol' } } }),
      check: (report) => {
        expect(findingsOf(report, 'dead-end')).toEqual([]);
        expect(messagesOf(report, 'schema')).toEqual([
          'states.goal.terminal must be "goal", "failure" or "neutral", not the string "gaol"; did you mean "goal"?',
        ]);
        expect(report.notAnalysed).toBe("the terminal kind of 'goal' could not be read");
      },
    },
    {
      name: 'a state without actions (dead-end reports it)',
      spec: chainSpec({
        states: { a: {}, b: { actions: [] }, goal: { terminal: 'goal' } },
        transitions: [{ from: 'a', action: 'go', to: 'b' }],
      }),
      check: (report) => expect(findingsOf(report, 'dead-end')).toHaveLength(1),
    },
  ],
  invalid: [
    {
      name: 'at the state, listing every offered action without a transition',
      spec: chainSpec({ actions: ['go', 'wait', 'fly'] }),
      findings: [
        {
          at: '"a"',
          severity: 'error',
          message: `'a' offers 'wait' and 'fly', but no transition says what they do there: a policy may take them, so the MDP is undefined at 'a' and the spec is not compiled`,
        },
        { at: '"b"' },
      ],
      check: (report) => expect(report.model).toBeUndefined(),
    },
    {
      name: 'its fix narrows the action set, after which the spec compiles',
      spec: chainSpec({
        actions: ['go', 'wait'],
        states: { a: {}, b: { actions: ['go'] }, goal: { terminal: 'goal' } },
      }),
      findings: [
        {
          at: '"a"',
          message: /^'a' offers 'wait', but no transition says what it does there: a policy may take it/,
          fixes: [`Narrow the actions of 'a' to 'go'`],
        },
      ],
      afterFix: (fixed) => {
        expect(JSON.parse(fixed.text).states.a).toEqual({ actions: ['go'] });
        expect(fixed.model).toBeDefined();
      },
    },
    {
      name: 'a pair that no transition is about, beside a misspelt transition',
      spec: chainSpec({
        actions: ['go', 'wait'],
        transitions: [
          { form: 'a', action: 'go', to: 'b' },
          { from: 'b', action: ['go', 'wait'], to: 'goal' },
        ],
      }),
      findings: [{ at: '"a"', message: /^'a' offers 'wait', but/ }],
    },
  ],
});
