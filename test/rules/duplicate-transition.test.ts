import { describe, expect, it } from 'vitest';
import { applyFix, chainSpec, chainWith, checkSpec, findingsOf, spanText } from '../helpers/specs';

const RULE = 'duplicate-transition';

describe('duplicate-transition', () => {
  it('fires at the later definition, says which one wins, and the first one is used', () => {
    const report = checkSpec(chainWith([{ from: 'a', action: 'go', to: 'goal', reward: 100 }]));
    const [finding, ...rest] = findingsOf(report, RULE);
    expect(rest).toEqual([]);
    expect(finding.severity).toBe('warning');
    expect(JSON.parse(spanText(report, finding))).toEqual({ from: 'a', action: 'go', to: 'goal', reward: 100 });
    expect(finding.message).toBe(
      `transitions[2] defines 'a' --go--> (first defined by transitions[0], line 16) again: this transition is never used: the first definition wins, so edits here change nothing`,
    );
    expect(finding.tags).toEqual(['unnecessary']);
    expect(JSON.parse(spanText(report, finding.related![0].span))).toEqual({ from: 'a', action: 'go', to: 'b', reward: -1 });
    // The first definition wins in the model: a --go--> b with reward -1.
    const model = report.model!;
    const a = model.stateIndex.get('a')!;
    const k = model.outcomeStart[model.choiceStart[a]];
    expect(model.stateIds[model.outcomeTarget[k]]).toBe('b');
    expect(model.outcomeReward[k]).toBe(-1);
  });

  it('deletes the unused transition with its fix', () => {
    const report = checkSpec(chainWith([{ from: 'a', action: 'go', to: 'goal' }]));
    const [finding] = findingsOf(report, RULE);
    const fixedText = applyFix(report, finding.fixes![0].edits);
    expect(JSON.parse(fixedText).transitions).toEqual(chainSpec().transitions);
    expect(findingsOf(checkSpec(fixedText), RULE)).toEqual([]);
  });

  it('reports a list transition whose pairs are partly defined already, without tagging or deleting it', () => {
    const report = checkSpec(chainSpec({ actions: ['go', 'wait'], transitions: [{ from: 'a', action: 'go', to: 'b' }, { from: 'b', action: 'go', to: 'goal' }, { from: ['a', 'b'], action: ['wait', 'go'], to: 'a' }] }));
    const [finding, ...rest] = findingsOf(report, RULE);
    expect(rest).toEqual([]);
    expect(finding.message).toMatch(/^transitions\[2\] defines 'a' --go--> \(first defined by transitions\[0\], line \d+\) and 'b' --go--> \(first defined by transitions\[1\], line \d+\) again: for these pairs this transition is never used/);
    expect(finding.tags).toBeUndefined();
    expect(finding.fixes).toEqual([]);
    expect(finding.related).toHaveLength(2);
  });

  it('does not fire on distinct pairs, or on transitions out of terminals', () => {
    expect(findingsOf(checkSpec(chainSpec()), RULE)).toEqual([]);
    const report = checkSpec(chainWith([{ from: 'goal', action: 'go', to: 'a' }, { from: 'goal', action: 'go', to: 'b' }]));
    expect(findingsOf(report, RULE)).toEqual([]);
    expect(findingsOf(report, 'terminal-has-transitions')).toHaveLength(2);
  });
});
