/**
 * syntax: a TypeScript model that does not parse is reported as such, and its code is not run.
 */
import { expect } from 'vitest';
import { testRule } from '../helpers/rule-tester';
import { findingsOf } from '../helpers/specs';

const valid = `import { defineMdp } from 'episcope';
export default defineMdp({
  discount: 0.9,
  start: 0,
  terminal: (s: number) => (s >= 2 ? 'goal' : undefined),
  actions: () => ['step'],
  outcomes: (s: number) => [{ state: s + 1, probability: 1, reward: -1 }],
});
`;

testRule('syntax', {
  valid: [
    {
      name: 'valid TypeScript',
      spec: { typescript: valid },
      check: (report) => {
        expect(report.findings).toEqual([]);
        expect(report.analysis).toBeDefined();
      },
    },
    {
      name: 'a JSON syntax error stays a schema finding',
      spec: '{ "discount": 0.9, ',
      check: (report) => expect(findingsOf(report, 'schema').length).toBeGreaterThan(0),
    },
  ],
  invalid: [
    {
      name: 'a TypeScript syntax error, instead of schema; the model code is not run',
      spec: { typescript: valid.replace('start: 0,', 'start: 0') },
      // Right after `start: 0`, where the comma is missing.
      findings: [{ at: 'terminal', severity: 'error', message: "syntax error: ',' expected." }],
      check: (report) => {
        expect(findingsOf(report, 'schema')).toEqual([]);
        expect(report.notAnalysed).toBe('the model code was not run because it has syntax errors');
      },
    },
  ],
});
