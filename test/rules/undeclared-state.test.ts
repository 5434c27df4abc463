import { describe, expect, it } from 'vitest';
import { applyFix, chainSpec, chainWith, checkSpec, findingsOf, spanText } from '../helpers/specs';

const RULE = 'undeclared-state';

describe('undeclared-state', () => {
  it('fires at a misspelt target, suggests the declared id, and the model is not compiled', () => {
    const report = checkSpec(chainSpec({ transitions: [{ from: 'a', action: 'go', to: 'bb', reward: -1 }, { from: 'b', action: 'go', to: 'goal' }] }));
    const [finding, ...rest] = findingsOf(report, RULE);
    expect(rest).toEqual([]);
    expect(finding.severity).toBe('error');
    expect(spanText(report, finding)).toBe('"bb"');
    expect(finding.message).toBe(
      `transitions[0] ('a' --go-->) leads to 'bb', which is not declared in "states" (did you mean 'b'?): episodes that take it have no next state, so the MDP is undefined and no values are computed`,
    );
    expect(report.model).toBeUndefined();
  });

  it('offers renaming to the closest id and declaring the state; the rename removes the finding', () => {
    const report = checkSpec(chainSpec({ transitions: [{ from: 'a', action: 'go', to: 'bb', reward: -1 }, { from: 'b', action: 'go', to: 'goal' }] }));
    const [finding] = findingsOf(report, RULE);
    expect(finding.fixes?.map((f) => f.title)).toEqual([`Change to 'b'`, `Declare the state 'bb'`]);
    const renamed = checkSpec(applyFix(report, finding.fixes![0].edits));
    expect(findingsOf(renamed, RULE)).toEqual([]);
    expect(renamed.model).toBeDefined();
    const declared = applyFix(report, finding.fixes![1].edits);
    expect(JSON.parse(declared).states).toEqual({ a: {}, b: {}, goal: { terminal: 'goal' }, bb: {} });
    expect(findingsOf(checkSpec(declared), RULE)).toEqual([]);
  });

  it('fires at an undeclared from, start and potential key, each at its own text', () => {
    const report = checkSpec(
      chainWith([{ from: 'c', action: 'go', to: 'goal' }], { start: { a: 0.5, z: 0.5 }, shaping: { potential: { qq: 1 } } }),
    );
    const findings = findingsOf(report, RULE);
    // In document order: start, transitions, then shaping (JSON.stringify appends the new key).
    expect(findings.map((f) => spanText(report, f))).toEqual(['"z"', '"c"', '"qq"']);
    expect(findings[0].message).toMatch(/^the start names 'z', which is not declared/);
    expect(findings[1].message).toMatch(/^transitions\[2\] leaves 'c'/);
    expect(findings[2].message).toMatch(/^shaping\.potential names 'qq'/);
    // No declared id is close to these: no rename is offered, only the declaration.
    expect(findings[1].fixes?.map((f) => f.title)).toEqual([`Declare the state 'c'`]);
  });

  it('fires once per written name, also in map and list outcomes and in a from list', () => {
    const report = checkSpec(
      chainWith([
        { from: ['a', 'x'], action: ['go', 'go2'], to: { goal: 0.5, y: 0.5 } },
        { from: 'b', action: 'go2', to: [{ state: 'w', probability: 1 }] },
      ], { actions: ['go', 'go2'] }),
    );
    const names = findingsOf(report, RULE).map((f) => spanText(report, f));
    expect(names).toEqual(['"x"', '"y"', '"w"']);
  });

  it('does not fire on a spec whose names are all declared', () => {
    expect(findingsOf(checkSpec(chainSpec({ start: ['a', 'b'], shaping: { potential: { a: 1 } } })), RULE)).toEqual([]);
  });

  it('stays silent when no state could be read at all (the schema finding covers it)', () => {
    const report = checkSpec(chainSpec({ states: [] }));
    expect(findingsOf(report, RULE)).toEqual([]);
    expect(findingsOf(report, 'schema').map((f) => f.message)).toContain('states must be an object, not a list (Every state, keyed by its id)');
  });

  it('can be switched off by the config', () => {
    const report = checkSpec(chainSpec({ start: 'nowhere' }), { rules: { [RULE]: 'off' } });
    expect(findingsOf(report, RULE)).toEqual([]);
    expect(report.model).toBeUndefined();
  });
});
