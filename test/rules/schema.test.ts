import { describe, expect, it } from 'vitest';
import { chainSpec, checkSpec, findingsOf, spanText, specText } from '../helpers/specs';

const RULE = 'schema';

describe('schema (reported by the loader, configured like any rule)', () => {
  it('fires with the exact key, the path and a suggestion, and the rest of the spec is still checked', () => {
    const spec = chainSpec({ transitions: [{ from: 'a', action: 'go', to: 'b', rewrd: -1 }, { from: 'b', action: 'go', to: 'gaol' }] });
    const report = checkSpec(spec);
    const [finding, ...rest] = findingsOf(report, RULE);
    expect(rest).toEqual([]);
    expect(finding.severity).toBe('error');
    expect(spanText(report, finding)).toBe('"rewrd"');
    expect(finding.message).toBe('unknown property "rewrd" in transitions[0]; did you mean "reward"?');
    // Spec-level rules still run on what could be read.
    expect(findingsOf(report, 'undeclared-state').map((f) => spanText(report, f))).toEqual(['"gaol"']);
  });

  it('fires on invalid JSON with the position of the problem', () => {
    const text = specText(chainSpec()).replace('"discount": 0.9,', '"discount": 0.9');
    const report = checkSpec(text);
    const [finding] = findingsOf(report, RULE);
    expect(finding.message).toBe("invalid JSON: ',' is expected between entries");
    expect(report.lines.position(finding.span.start)).toEqual({ line: 3, character: 2 });
    expect(report.notAnalysed).toBeUndefined();
  });

  it('takes its severity from the config, and can be switched off', () => {
    const spec = chainSpec({ name: 7 });
    expect(findingsOf(checkSpec(spec), RULE).map((f) => f.severity)).toEqual(['error']);
    expect(findingsOf(checkSpec(spec, { rules: { schema: 'warning' } }), RULE).map((f) => f.severity)).toEqual(['warning']);
    expect(findingsOf(checkSpec(spec, { rules: { schema: 'off' } }), RULE)).toEqual([]);
  });

  it('does not fire on a valid spec', () => {
    expect(findingsOf(checkSpec(chainSpec({ $schema: '../schemas/mdp.schema.json', horizon: 20, objective: 'minimize' })), RULE)).toEqual([]);
  });
});
