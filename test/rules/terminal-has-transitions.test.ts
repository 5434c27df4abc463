/**
 * terminal-has-transitions: entering a terminal ends the episode (Sutton and Barto, Reinforcement
 * Learning, 2nd ed., section 3.4: an absorbing state), so a transition out of it is never taken.
 */
import { expect } from 'vitest';
import { testRule } from '../helpers/rule-tester';
import { applyFix, chainWith, checkSpec, findingsOf } from '../helpers/specs';

const RULE = 'terminal-has-transitions';

testRule(RULE, {
  valid: [{ name: 'transitions out of non-terminal states only', spec: chainWith([]) }],
  invalid: [
    {
      name: 'a whole transition out of a terminal, tagged unnecessary; the analysis ignores it',
      spec: chainWith([{ from: 'goal', action: 'go', to: 'a', reward: 5 }]),
      findings: [
        {
          at: JSON.stringify({ from: 'goal', action: 'go', to: 'a', reward: 5 }, null, 2).replace(/\n/g, '\n    '),
          severity: 'warning',
          message: `'goal' is a goal terminal: entering a terminal ends the episode, so this transition is never taken and its outcomes and rewards count for nothing`,
          related: ['"goal"'],
        },
      ],
      check: (report, [finding]) => {
        expect(finding.tags).toEqual(['unnecessary']);
        // The transition is ignored, so the spec still compiles with the two real choices.
        expect(report.model?.choiceCount).toBe(2);
      },
    },
    {
      name: 'two of them: each fix deletes its transition, and fixing both leaves no finding',
      spec: chainWith([
        { from: 'goal', action: 'go', to: 'a' },
        { from: 'goal', action: 'go', to: 'b' },
      ]),
      findings: [{ fixes: [/./] }, { fixes: [/./] }],
      afterFix: (fixed) => {
        const transitions = JSON.parse(fixed.text).transitions as { to: string }[];
        expect(transitions).toHaveLength(3);
        expect([
          ['b', 'goal', 'b'],
          ['b', 'goal', 'a'],
        ]).toContainEqual(transitions.map((t) => t.to));
        const again = checkSpec(applyFix(fixed, findingsOf(fixed, RULE)[0].fixes![0].edits));
        expect(findingsOf(again, RULE)).toEqual([]);
      },
    },
    {
      name: 'the terminal entries of a from list that also names live states',
      spec: chainWith([{ from: ['a', 'goal'], action: 'go', to: 'b' }]),
      findings: [
        {
          at: '"goal"',
          message: `'goal' is a goal terminal: entering it ends the episode, so transitions[2] is never taken from it (it still applies to 'a')`,
          fixes: [],
        },
      ],
    },
  ],
});
