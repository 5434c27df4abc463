import { readFileSync } from 'node:fs';
import * as path from 'node:path';
import { describe, expect, it } from 'vitest';
import type { SarifLog } from '../../server/src/cli/sarif';
import { documentedRules } from '../../server/src/cli/run';
import { REPO_ROOT, cli } from '../cli/cli-harness';
import { multitoolValidate, schemaErrors } from './sarif-tools';

describe('SARIF from a folder of specs', () => {
  it('from a folder of specs, every registered rule is described and the log validates with no error', async () => {
    const result = await cli(['check', 'examples', '--format', 'sarif', '--fail-on', 'never'], { cwd: REPO_ROOT });
    expect(result.stderr).toBe('');
    expect(result.code).toBe(0);
    const log = JSON.parse(result.stdout) as SarifLog;
    const driver = log.runs[0].tool.driver as { rules: Array<{ id: string }>; version: string };
    const packageVersion = JSON.parse(readFileSync(path.join(REPO_ROOT, 'package.json'), 'utf8')).version;
    expect(driver.version).toBe(packageVersion);
    expect(driver.rules.map((r) => r.id)).toEqual(
      [...new Set([...documentedRules().map((r) => r.id), 'config'])].sort(),
    );
    expect(log.runs[0].artifacts.length).toBeGreaterThanOrEqual(4);
    for (const artifact of log.runs[0].artifacts)
      expect(artifact.location.uri).toMatch(/^examples\/[\w%.-]+\.mdp\.(json|ts)$/);
    expect(log.runs[0].results.length).toBeGreaterThan(0);
    expect(schemaErrors(log)).toEqual([]);
    const validation = multitoolValidate(log);
    expect(validation.filter((r) => r.level === 'error')).toEqual([]);
    // SARIF2005 asks for the tool's informationUri, which exists only once the package has a homepage.
    expect(validation.filter((r) => r.level === 'warning' && r.ruleId !== 'SARIF2005')).toEqual([]);
  });
});
