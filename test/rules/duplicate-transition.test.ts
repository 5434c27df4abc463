/**
 * duplicate-transition: a later definition of a (state, action) pair already defined is never
 * used; the first definition wins (common practice for declarative tables).
 */
import { expect } from 'vitest';
import { testRule } from '../helpers/rule-tester';
import { chainSpec, chainWith, spanText } from '../helpers/specs';

testRule('duplicate-transition', {
  valid: [
    { name: 'distinct pairs', spec: chainSpec() },
    {
      name: 'transitions out of a terminal (another rule reports them)',
      spec: chainWith([
        { from: 'goal', action: 'go', to: 'a' },
        { from: 'goal', action: 'go', to: 'b' },
      ]),
    },
  ],
  invalid: [
    {
      name: 'a later definition: it says which one wins, and the first one is used',
      spec: chainWith([{ from: 'a', action: 'go', to: 'goal', reward: 100 }]),
      findings: [
        {
          severity: 'warning',
          message: `transitions[2] defines 'a' --go--> (first defined by transitions[0], line 16) again: this transition is never used: the first definition wins, so edits here change nothing`,
        },
      ],
      check: (report, [finding]) => {
        expect(JSON.parse(spanText(report, finding))).toEqual({ from: 'a', action: 'go', to: 'goal', reward: 100 });
        expect(finding.tags).toEqual(['unnecessary']);
        expect(JSON.parse(spanText(report, finding.related![0].span))).toEqual({
          from: 'a',
          action: 'go',
          to: 'b',
          reward: -1,
        });
        // The first definition wins in the model: a --go--> b with reward -1.
        const model = report.model!;
        const a = model.stateIndex.get('a')!;
        const k = model.outcomeStart[model.choiceStart[a]];
        expect(model.stateIds[model.outcomeTarget[k]]).toBe('b');
        expect(model.outcomeReward[k]).toBe(-1);
      },
    },
    {
      name: 'its fix deletes the unused transition',
      spec: chainWith([{ from: 'a', action: 'go', to: 'goal' }]),
      findings: [{ fixes: [/./] }],
      afterFix: (fixed) => expect(JSON.parse(fixed.text).transitions).toEqual(chainSpec().transitions),
    },
    {
      name: 'a list transition whose pairs are partly defined already, neither tagged nor deleted',
      spec: chainSpec({
        actions: ['go', 'wait'],
        transitions: [
          { from: 'a', action: 'go', to: 'b' },
          { from: 'b', action: 'go', to: 'goal' },
          { from: ['a', 'b'], action: ['wait', 'go'], to: 'a' },
        ],
      }),
      findings: [
        {
          message:
            /^transitions\[2\] defines 'a' --go--> \(first defined by transitions\[0\], line \d+\) and 'b' --go--> \(first defined by transitions\[1\], line \d+\) again: for these pairs this transition is never used/,
          fixes: [],
        },
      ],
      check: (_report, [finding]) => {
        expect(finding.tags).toBeUndefined();
        expect(finding.related).toHaveLength(2);
      },
    },
  ],
});
