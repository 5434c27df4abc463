/**
 * schema (reported by the loader, configured like any rule): the spec against our JSON Schema.
 */
import { expect } from 'vitest';
import { testRule } from '../helpers/rule-tester';
import { chainSpec, findingsOf, spanText, specText } from '../helpers/specs';

testRule('schema', {
  valid: [
    {
      name: 'a valid spec',
      spec: chainSpec({ $schema: '../schemas/mdp.schema.json', horizon: 20, objective: 'minimize' }),
    },
    { name: 'switched off in the config', spec: chainSpec({ name: 7 }), config: { rules: { schema: 'off' } } },
  ],
  invalid: [
    {
      name: 'the exact key, the path and a suggestion; the rest of the spec is still checked',
      spec: chainSpec({
        transitions: [
          { from: 'a', action: 'go', to: 'b', rewrd: -1 },
          { from: 'b', action: 'go', to: 'gaol' },
        ],
      }),
      findings: [
        {
          at: '"rewrd"',
          severity: 'error',
          message: 'unknown property "rewrd" in transitions[0]; did you mean "reward"?',
        },
      ],
      // Spec-level rules still run on what could be read.
      check: (report) =>
        expect(findingsOf(report, 'undeclared-state').map((f) => spanText(report, f))).toEqual(['"gaol"']),
    },
    {
      name: 'invalid JSON, with the position of the problem',
      spec: specText(chainSpec()).replace('"discount": 0.9,', '"discount": 0.9'),
      findings: [{ message: "invalid JSON: ',' is expected between entries" }],
      check: (report, [finding]) => {
        expect(report.lines.position(finding.span.start)).toEqual({ line: 3, character: 2 });
        expect(report.notAnalysed).toBeUndefined();
      },
    },
    { name: 'a wrong type, as an error by default', spec: chainSpec({ name: 7 }), findings: [{ severity: 'error' }] },
    {
      name: 'its severity taken from the config',
      spec: chainSpec({ name: 7 }),
      config: { rules: { schema: 'warning' } },
      findings: [{ severity: 'warning' }],
    },
  ],
});
