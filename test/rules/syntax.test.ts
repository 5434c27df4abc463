import { describe, expect, it } from 'vitest';
import { analyzeTs } from '../typescript/ts-specs';
import { checkSpec, findingsOf } from '../helpers/specs';

const RULE = 'syntax';

const valid = `import { defineMdp } from 'episcope';
export default defineMdp({
  discount: 0.9,
  start: 0,
  terminal: (s: number) => (s >= 2 ? 'goal' : undefined),
  actions: () => ['step'],
  outcomes: (s: number) => [{ state: s + 1, probability: 1, reward: -1 }],
});
`;

describe('syntax', () => {
  it('fires at a TypeScript syntax error, instead of schema, and the model code is not run', async () => {
    const broken = valid.replace('start: 0,', 'start: 0');
    const report = await analyzeTs(broken);
    const findings = findingsOf(report, RULE);
    expect(findings).toHaveLength(1);
    expect(findings[0].message).toBe("syntax error: ',' expected.");
    expect(findings[0].severity).toBe('error');
    // Right after `start: 0`, where the comma is missing.
    expect(broken.slice(findings[0].span.start, findings[0].span.end)).toBe('terminal');
    expect(findingsOf(report, 'schema')).toEqual([]);
    expect(report.notAnalysed).toBe('the model code was not run because it has syntax errors');
  });

  it('does not fire on valid TypeScript, and JSON syntax errors stay schema findings', async () => {
    const report = await analyzeTs(valid);
    expect(report.findings).toEqual([]);
    expect(report.analysis).toBeDefined();
    const json = checkSpec('{ "discount": 0.9, ');
    expect(findingsOf(json, RULE)).toEqual([]);
    expect(findingsOf(json, 'schema').length).toBeGreaterThan(0);
  });
});
