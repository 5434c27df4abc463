import { describe, expect, it } from 'vitest';
import { applyFix, chainWith, checkSpec, findingsOf, spanText } from '../helpers/specs';

const RULE = 'terminal-has-transitions';

describe('terminal-has-transitions', () => {
  it('fires at a whole transition out of a terminal, tagged unnecessary, and the analysis ignores it', () => {
    const report = checkSpec(chainWith([{ from: 'goal', action: 'go', to: 'a', reward: 5 }]));
    const [finding, ...rest] = findingsOf(report, RULE);
    expect(rest).toEqual([]);
    expect(finding.severity).toBe('warning');
    expect(finding.tags).toEqual(['unnecessary']);
    expect(JSON.parse(spanText(report, finding))).toEqual({ from: 'goal', action: 'go', to: 'a', reward: 5 });
    expect(finding.message).toBe(
      `'goal' is a goal terminal: entering a terminal ends the episode, so this transition is never taken and its outcomes and rewards count for nothing`,
    );
    expect(finding.related?.map((r) => spanText(report, r.span))).toEqual(['"goal"']);
    // The transition is ignored, so the spec still compiles with the two real choices.
    expect(report.model?.choiceCount).toBe(2);
  });

  it('deletes the transition with its fix, leaving valid JSON and no finding', () => {
    const report = checkSpec(chainWith([{ from: 'goal', action: 'go', to: 'a' }, { from: 'goal', action: 'go', to: 'b' }]));
    const findings = findingsOf(report, RULE);
    expect(findings).toHaveLength(2);
    const fixedText = applyFix(report, findings[1].fixes![0].edits);
    expect(JSON.parse(fixedText).transitions).toHaveLength(3);
    const firstFixed = applyFix(report, findings[0].fixes![0].edits);
    expect(JSON.parse(firstFixed).transitions.map((t: { to: string }) => t.to)).toEqual(['b', 'goal', 'b']);
    const again = checkSpec(applyFix({ text: fixedText }, findingsOf(checkSpec(fixedText), RULE)[0].fixes![0].edits));
    expect(findingsOf(again, RULE)).toEqual([]);
  });

  it('points at the terminal entries of a from list that also names live states', () => {
    const report = checkSpec(chainWith([{ from: ['a', 'goal'], action: 'go', to: 'b' }]));
    const [finding] = findingsOf(report, RULE);
    expect(spanText(report, finding)).toBe('"goal"');
    expect(finding.message).toBe(`'goal' is a goal terminal: entering it ends the episode, so transitions[2] is never taken from it (it still applies to 'a')`);
    expect(finding.fixes ?? []).toEqual([]);
  });

  it('does not fire for transitions out of non-terminal states', () => {
    expect(findingsOf(checkSpec(chainWith([])), RULE)).toEqual([]);
  });
});
