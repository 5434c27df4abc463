import { describe, expect, it } from 'vitest';
import { applyFix, chainSpec, checkSpec, findingsOf, spanText } from '../helpers/specs';

const RULE = 'missing-outcomes';

describe('missing-outcomes', () => {
  it('fires at the state, listing every offered action without a transition', () => {
    const report = checkSpec(chainSpec({ actions: ['go', 'wait', 'fly'] }));
    const findings = findingsOf(report, RULE);
    expect(findings.map((f) => spanText(report, f))).toEqual(['"a"', '"b"']);
    expect(findings[0].message).toBe(
      `'a' offers 'wait' and 'fly', but no transition says what they do there: a policy may take them, so the MDP is undefined at 'a' and the spec is not compiled`,
    );
    expect(findings[0].severity).toBe('error');
    expect(report.model).toBeUndefined();
  });

  it('narrows the action set with its fix, after which the spec compiles', () => {
    const report = checkSpec(chainSpec({ actions: ['go', 'wait'], states: { a: {}, b: { actions: ['go'] }, goal: { terminal: 'goal' } } }));
    const [finding] = findingsOf(report, RULE);
    expect(spanText(report, finding)).toBe('"a"');
    expect(finding.message).toMatch(/^'a' offers 'wait', but no transition says what it does there: a policy may take it/);
    expect(finding.fixes?.map((f) => f.title)).toEqual([`Narrow the actions of 'a' to 'go'`]);
    const fixedText = applyFix(report, finding.fixes![0].edits);
    expect(JSON.parse(fixedText).states.a).toEqual({ actions: ['go'] });
    const fixed = checkSpec(fixedText);
    expect(findingsOf(fixed, RULE)).toEqual([]);
    expect(fixed.model).toBeDefined();
  });

  it('counts a transition of a from list or action list as defining the pair', () => {
    const report = checkSpec(chainSpec({ actions: ['go', 'wait'], transitions: [{ from: ['a', 'b'], action: ['go', 'wait'], to: 'goal' }] }));
    expect(findingsOf(report, RULE)).toEqual([]);
    expect(report.model).toBeDefined();
  });

  it('does not repeat the schema finding of a transition whose from or action is misspelt', () => {
    const transitions = [
      { form: 'a', action: 'go', to: 'b' },
      { from: 'b', acton: 'go', to: 'goal' },
    ];
    const report = checkSpec(chainSpec({ transitions }));
    expect(findingsOf(report, RULE)).toEqual([]);
    expect(findingsOf(report, 'schema').map((f) => f.message)).toEqual([
      'unknown property "form" in transitions[0]; did you mean "from"? It is required (the state (or list of states) the transition leaves)',
      'unknown property "acton" in transitions[1]; did you mean "action"? It is required (the action (or list of actions) taken)',
    ]);
    expect(report.notAnalysed).toBe('2 transitions could not be read (no readable "from" or "action")');
    // A pair that no transition is about is still reported.
    const other = checkSpec(chainSpec({ actions: ['go', 'wait'], transitions: [{ form: 'a', action: 'go', to: 'b' }, { from: 'b', action: ['go', 'wait'], to: 'goal' }] }));
    expect(findingsOf(other, RULE).map((f) => spanText(other, f))).toEqual(['"a"']);
    expect(findingsOf(other, RULE)[0].message).toMatch(/^'a' offers 'wait', but/);
  });

  it('does not fire at a state whose terminal kind is misspelt (it was meant to be terminal)', () => {
    const report = checkSpec(chainSpec({ states: { a: {}, b: {}, goal: { terminal: 'gaol' } } }));
    expect(findingsOf(report, RULE)).toEqual([]);
    expect(findingsOf(report, 'dead-end')).toEqual([]);
    expect(findingsOf(report, 'schema').map((f) => f.message)).toEqual([
      'states.goal.terminal must be "goal", "failure" or "neutral", not the string "gaol"; did you mean "goal"?',
    ]);
    expect(report.notAnalysed).toBe("the terminal kind of 'goal' could not be read");
  });

  it('does not fire for terminals, complete states, or states without actions (dead-end reports those)', () => {
    expect(findingsOf(checkSpec(chainSpec()), RULE)).toEqual([]);
    const report = checkSpec(chainSpec({ states: { a: {}, b: { actions: [] }, goal: { terminal: 'goal' } }, transitions: [{ from: 'a', action: 'go', to: 'b' }] }));
    expect(findingsOf(report, RULE)).toEqual([]);
    expect(findingsOf(report, 'dead-end')).toHaveLength(1);
  });
});
