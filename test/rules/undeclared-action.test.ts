import { describe, expect, it } from 'vitest';
import { applyFix, chainSpec, chainWith, checkSpec, findingsOf, spanText } from '../helpers/specs';

const RULE = 'undeclared-action';

describe('undeclared-action', () => {
  it('fires at a misspelt action, suggests the offered one, and renaming removes it', () => {
    const report = checkSpec(chainSpec({ actions: ['go', 'wait'], transitions: [{ from: 'a', action: 'og', to: 'b' }, { from: 'a', action: 'wait', to: 'a' }, { from: 'b', action: 'go', to: 'goal' }, { from: 'b', action: 'wait', to: 'b' }] }));
    const [finding, ...rest] = findingsOf(report, RULE);
    expect(rest).toEqual([]);
    expect(finding.severity).toBe('error');
    expect(spanText(report, finding)).toBe('"og"');
    expect(finding.message).toBe(
      `'og' is not an action of 'a' (it offers 'go' and 'wait') (did you mean 'go'?): no policy can take it there, so transitions[0] is never used and the spec is not compiled until the action is offered or renamed`,
    );
    expect(report.model).toBeUndefined();
    const fixed = checkSpec(applyFix(report, finding.fixes![0].edits));
    expect(findingsOf(fixed, RULE)).toEqual([]);
    expect(fixed.model).toBeDefined();
  });

  it('fires for a state that narrowed its set, offering to add the action back', () => {
    const spec = chainSpec({
      actions: ['go', 'wait'],
      states: { a: { actions: ['go'] }, b: { actions: ['go'] }, goal: { terminal: 'goal' } },
      transitions: [{ from: 'a', action: 'go', to: 'b' }, { from: 'a', action: 'wait', to: 'a' }, { from: 'b', action: 'go', to: 'goal' }],
    });
    const report = checkSpec(spec);
    const [finding] = findingsOf(report, RULE);
    expect(spanText(report, finding)).toBe('"wait"');
    expect(finding.message).toMatch(/^'wait' is not an action of 'a' \(it offers 'go'\): /);
    expect(finding.related?.map((r) => spanText(report, r.span))).toEqual([JSON.stringify(['go'], null, 2).replace(/\n/g, '\n      ')]);
    const add = finding.fixes?.find((f) => f.title === `Add 'wait' to the actions of 'a'`);
    expect(add).toBeDefined();
    const fixedText = applyFix(report, add!.edits);
    expect(JSON.parse(fixedText).states.a.actions).toEqual(['go', 'wait']);
    const fixed = checkSpec(fixedText);
    expect(findingsOf(fixed, RULE)).toEqual([]);
    expect(fixed.model).toBeDefined();
  });

  it('reports a from list once per written action, naming every state that lacks it', () => {
    const report = checkSpec(chainWith([{ from: ['a', 'b'], action: 'jump', to: 'goal' }]));
    const findings = findingsOf(report, RULE);
    expect(findings).toHaveLength(1);
    expect(findings[0].message).toMatch(/^'jump' is not an action of 'a' and 'b': /);
  });

  it('does not fire for offered actions, terminal or undeclared from states, or states without actions', () => {
    expect(findingsOf(checkSpec(chainSpec()), RULE)).toEqual([]);
    // Out of a terminal: terminal-has-transitions; undeclared from: undeclared-state; no actions: dead-end.
    const report = checkSpec(
      chainWith([{ from: 'goal', action: 'fly', to: 'a' }, { from: 'nowhere', action: 'fly', to: 'a' }, { from: 'c', action: 'fly', to: 'a' }], {
        states: { a: {}, b: {}, c: { actions: [] }, goal: { terminal: 'goal' } },
      }),
    );
    expect(findingsOf(report, RULE)).toEqual([]);
    expect(findingsOf(report, 'terminal-has-transitions')).toHaveLength(1);
    expect(findingsOf(report, 'undeclared-state')).toHaveLength(1);
    expect(findingsOf(report, 'dead-end')).toHaveLength(1);
  });
});
