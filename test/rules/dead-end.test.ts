import { describe, expect, it } from 'vitest';
import { applyFix, chainSpec, checkSpec, findingsOf, spanText } from '../helpers/specs';

const RULE = 'dead-end';

describe('dead-end', () => {
  it('fires at a non-terminal state whose action list is empty', () => {
    const report = checkSpec(chainSpec({ states: { a: {}, b: { actions: [] }, goal: { terminal: 'goal' } }, transitions: [{ from: 'a', action: 'go', to: 'b' }] }));
    const [finding, ...rest] = findingsOf(report, RULE);
    expect(rest).toEqual([]);
    expect(spanText(report, finding)).toBe('"b"');
    expect(finding.severity).toBe('error');
    expect(finding.message).toBe(
      `'b' is not terminal but offers no action (its "actions" list is empty): an episode that enters it can neither continue nor end, so the MDP is undefined there and the spec is not compiled`,
    );
    expect(finding.related?.map((r) => spanText(report, r.span))).toEqual(['[]']);
    expect(report.model).toBeUndefined();
  });

  it('offers to mark it terminal of each kind; the fix removes the finding and the spec compiles', () => {
    const report = checkSpec(chainSpec({ states: { a: {}, b: { actions: [] }, goal: { terminal: 'goal' } }, transitions: [{ from: 'a', action: 'go', to: 'b' }] }));
    const [finding] = findingsOf(report, RULE);
    expect(finding.fixes?.map((f) => f.title)).toEqual([`Mark 'b' as a goal terminal`, `Mark 'b' as a failure terminal`, `Mark 'b' as a neutral terminal`]);
    const fixedText = applyFix(report, finding.fixes![1].edits);
    expect(JSON.parse(fixedText).states.b).toEqual({ actions: [], terminal: 'failure' });
    const fixed = checkSpec(fixedText);
    expect(findingsOf(fixed, RULE)).toEqual([]);
    expect(fixed.model).toBeDefined();
  });

  it('fires once, at the spec, when neither the states nor the spec declare actions, and its fix declares the used ones', () => {
    const report = checkSpec(chainSpec({ actions: undefined }));
    const findings = findingsOf(report, RULE);
    expect(findings.map((f) => spanText(report, f))).toEqual(['{']);
    expect(findings[0].message).toBe(
      `no state offers an action: neither the spec nor any state declares "actions" (the transitions use 'go'), so all 2 non-terminal states are dead ends and the spec is not compiled; give the spec a default "actions" list (or each state its own)`,
    );
    // The transitions are not also reported as using undeclared actions.
    expect(findingsOf(report, 'undeclared-action')).toEqual([]);
    expect(findings[0].fixes?.map((f) => f.title)).toEqual(['Declare "actions": ["go"]']);
    const fixed = checkSpec(applyFix(report, findings[0].fixes![0].edits));
    expect(fixed.findings).toEqual([]);
    expect(fixed.model).toBeDefined();
  });

  it('fires per state when some state declares actions and another has none', () => {
    const report = checkSpec(chainSpec({ actions: undefined, states: { a: { actions: ['go'] }, b: {}, goal: { terminal: 'goal' } } }));
    const findings = findingsOf(report, RULE);
    expect(findings.map((f) => spanText(report, f))).toEqual(['"b"']);
    expect(findings[0].message).toContain('(neither it nor the spec declares "actions")');
  });

  it('does not fire for terminals or states with actions', () => {
    expect(findingsOf(checkSpec(chainSpec()), RULE)).toEqual([]);
    expect(findingsOf(checkSpec(chainSpec({ actions: undefined, states: { a: { actions: ['go'] }, b: { actions: ['go'] }, goal: { terminal: 'goal' } } })), RULE)).toEqual([]);
  });
});
