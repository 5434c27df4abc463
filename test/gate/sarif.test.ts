import { describe, expect, it } from 'vitest';
import { FINGERPRINT_NAME, toSarif, type SarifLog } from '../../server/src/cli/sarif';
import type { JsonFinding, JsonOutput } from '../../server/src/cli/json-output';
import { CONFIG_RULE } from '../../server/src/config-file';
import { SUPPRESSION_RULE } from '../../server/src/suppress';
import { multitoolValidate, schemaErrors } from './sarif-tools';

const RULES = [
  SUPPRESSION_RULE,
  CONFIG_RULE,
  {
    id: 'reward-loop',
    defaultSeverity: 'warning' as const,
    summary: 'A loop pays more than the goal.',
    documentation: 'Why it matters.\n\nHow to fix it.',
  },
];

function finding(
  rule: string,
  line: number,
  message: string,
  severity: JsonFinding['severity'] = 'warning',
): JsonFinding {
  return { rule, severity, message, line, column: 7, endLine: line + 1, endColumn: 3, trace: [] };
}

function output(loopLine: number): JsonOutput {
  const loop: JsonFinding = {
    ...finding(
      'reward-loop',
      loopLine,
      'the loop hall -> pad -> hall earns 48.1 from the start; reaching the exit earns 7.2',
    ),
    trace: [
      { state: 'hall', action: 'east', line: loopLine, column: 7 },
      { state: 'pad', action: 'west', line: loopLine + 2, column: 7 },
      { state: 'hall' },
    ],
    related: [
      { message: 'the transition hall --east--> pad', line: loopLine, column: 7, endLine: loopLine, endColumn: 40 },
    ],
  };
  return {
    version: 1,
    files: [
      {
        path: 'specs/my drone.mdp.json',
        findings: [finding('suppression', 2, 'episcope-ignore for trap-state suppresses nothing'), loop],
      },
      {
        path: 'episcope.config.json',
        findings: [finding('config', 3, 'rules: no rule named "reward-lop"', 'error')],
        internalErrors: ['rule x failed: boom'],
      },
    ],
    summary: { files: 2, error: 1, warning: 2, info: 0 },
  };
}

const options = { cwd: '/work/project', toolName: 'episcope', toolVersion: '0.1.0', rules: RULES };

describe('SARIF output', () => {
  it('describes every rule and places results with 1-based regions and relative URIs', () => {
    const log = toSarif(output(12), options);
    const run = log.runs[0];
    const driver = run.tool.driver as { name: string; version: string; rules: Array<Record<string, any>> };
    expect(driver.name).toBe('episcope');
    expect(driver.version).toBe('0.1.0');
    expect(driver.rules.map((r) => r.id)).toEqual(['config', 'reward-loop', 'suppression']);
    expect(driver.rules[0].name).toBeUndefined();
    const loopRule = driver.rules[1];
    expect(loopRule).toMatchObject({
      name: 'RewardLoop',
      shortDescription: { text: 'A loop pays more than the goal.' },
      fullDescription: { text: 'Why it matters.' },
      help: { text: 'Why it matters.\n\nHow to fix it.' },
      defaultConfiguration: { level: 'warning' },
    });
    const loop = run.results[1];
    expect(loop.ruleId).toBe('reward-loop');
    expect(loop.ruleIndex).toBe(1);
    expect(loop.level).toBe('warning');
    expect(loop.locations[0].physicalLocation).toEqual({
      artifactLocation: { uri: 'specs/my%20drone.mdp.json', uriBaseId: '%SRCROOT%', index: 0 },
      region: { startLine: 12, startColumn: 7, endLine: 13, endColumn: 3 },
    });
    expect(run.originalUriBaseIds['%SRCROOT%'].uri).toBe('file:///work/project/');
    expect(loop.codeFlows![0].threadFlows[0].locations.map((l) => l.location.message!.text)).toEqual([
      'hall --east-->',
      'pad --west-->',
      'hall',
    ]);
    expect(loop.relatedLocations![0].message).toEqual({ text: 'the transition hall --east--> pad' });
    expect(run.results[2].level).toBe('error');
    expect(run.invocations[0].executionSuccessful).toBe(false);
  });

  it('keeps fingerprints when unrelated lines move, and tells different findings apart', () => {
    const before = toSarif(output(12), options).runs[0].results;
    const after = toSarif(output(40), options).runs[0].results;
    const prints = (results: SarifLog['runs'][number]['results']) =>
      results.map((r) => r.partialFingerprints[FINGERPRINT_NAME]);
    expect(prints(after)).toEqual(prints(before));
    expect(new Set(prints(before)).size).toBe(before.length);
    expect(after[1].locations[0].physicalLocation!.region!.startLine).toBe(40);
  });

  it('validates against the SARIF 2.1.0 schema and the SARIF Multitool', () => {
    const log = toSarif(output(12), options);
    expect(schemaErrors(log)).toEqual([]);
    const results = multitoolValidate(log);
    expect(results.filter((r) => r.level === 'error')).toEqual([]);
    // The one warning: the tool has no informationUri while the package declares no homepage.
    expect(results.filter((r) => r.level === 'warning').map((r) => r.ruleId)).toEqual(['SARIF2005']);
    expect(
      multitoolValidate({
        ...log,
        runs: [
          {
            ...log.runs[0],
            tool: { driver: { ...log.runs[0].tool.driver, informationUri: 'https://example.org/episcope' } },
          },
        ],
      }).filter((r) => r.level !== 'note'),
    ).toEqual([]);
  });

  it('a schema violation is caught by both checks (the checks can fail)', () => {
    const log = toSarif(output(12), options) as unknown as { runs: Array<{ results: Array<Record<string, unknown>> }> };
    delete log.runs[0].results[0].message;
    expect(schemaErrors(log).length).toBeGreaterThan(0);
    expect(multitoolValidate(log).filter((r) => r.level === 'error').length).toBeGreaterThan(0);
  });
});
