/**
 * Learning through the whole pipeline: the cliff walking black box (Sutton and Barto, 2nd ed.,
 * Example 6.6) learned in the sandbox worker, its JSON against the output schema, and learning on
 * an enumerable spec with rollouts set beside its exact optimal value.
 */
import Ajv2020 from 'ajv/dist/2020';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, test } from 'vitest';
import outputSchema from '../../schemas/cli-output.schema.json';
import { analyzeFile } from '../../server/src/analyze';
import { fileReportToJson, jsonOutput } from '../../server/src/cli/json-output';
import { markdownReport } from '../../server/src/cli/markdown';
import { resolveConfig } from '../../server/src/config';

const CLIFF = join(__dirname, '../fixtures/learning/cliff-walking.mdp.ts');

describe('learning in the pipeline', () => {
  test('cliff walking in the sandbox: the learned greedy policy returns -13 along the edge, beside the random policy', async () => {
    const config = resolveConfig({ rollouts: 200 });
    const report = await analyzeFile(CLIFF, readFileSync(CLIFF, 'utf8'), { config });
    expect(report.internalErrors).toEqual([]);
    const learned = report.rollouts?.learned;
    expect(learned?.return.mean).toBe(-13);
    expect(learned?.reach.goal).toBe(1);
    // The random policy falls off the cliff again and again: far below the optimal path.
    expect(report.rollouts!.random!.return.mean).toBeLessThan(-1000);
    const learning = report.rollouts!.learning!;
    expect(learning.spent.steps).toBeLessThanOrEqual(config.learning.steps);
    expect(learning.path.actions).toEqual(['up', ...new Array(11).fill('right'), 'down']);
    // From the start, "up" (-13) beats staying put with "left" or "down" (-14) at 95%.
    expect(learning.decision?.best.action).toBe('up');
    expect(learning.decision?.decided).toBe(true);
    const json = jsonOutput([fileReportToJson(report)]);
    const validate = new Ajv2020({ allErrors: true, strict: false }).compile(outputSchema);
    expect(validate(JSON.parse(JSON.stringify(json))), JSON.stringify(validate.errors)).toBe(true);
    expect(json.files[0].rollouts?.learning?.method).toBe('q-learning');
    // The pull-request comment puts the learned policy's -13 beside the random policy's estimate.
    const row = markdownReport(json)
      .split('\n')
      .find((line) => line.startsWith('| `') && line.includes('cliff-walking'));
    const cells = row!
      .slice(1, -1)
      .split('|')
      .map((c) => c.trim());
    expect(cells[1]).toMatch(/^-\d+(\.\d+)? \(-\d+(\.\d+)? \.\. -\d+(\.\d+)?\), 200 episodes$/);
    expect(cells[2]).toBe('-13 (-13 .. -13), 200 episodes');
    expect(cells[3]).toBe(`${learning.spent.episodes} episodes, ${learning.spent.steps} steps`);
  });

  test('the same seed gives the same learning in the sandbox; learning off leaves it out', async () => {
    const text = readFileSync(CLIFF, 'utf8');
    const config = resolveConfig({ rollouts: 50, learning: { steps: 20_000 } });
    const a = await analyzeFile(CLIFF, text, { config });
    const b = await analyzeFile(CLIFF, text, { config });
    expect(b.rollouts?.learning).toEqual(a.rollouts?.learning);
    expect(b.rollouts?.learned).toEqual(a.rollouts?.learned);
    const off = await analyzeFile(CLIFF, text, {
      config: resolveConfig({ rollouts: 50, learning: { method: 'off' } }),
    });
    expect(off.rollouts?.learned).toBeUndefined();
    expect(off.rollouts?.random).toBeDefined();
  });

  test('an enumerable spec with rollouts: the learned estimate beside the exact optimal value', async () => {
    const path = join(__dirname, '../../examples/warehouse-picking.mdp.json');
    const report = await analyzeFile(path, readFileSync(path, 'utf8'), { config: resolveConfig({ rollouts: 1000 }) });
    const exact = report.rollouts?.learning?.exact;
    expect(exact?.optimal).toEqual(report.analysis?.start.optimal);
    const learned = report.rollouts!.learned!;
    expect(exact?.gap).toBeCloseTo(learned.return.mean - (exact!.optimal.lower + exact!.optimal.upper) / 2, 12);
    // The learned policy is optimal here: its interval holds the exact value.
    expect(exact?.withinInterval).toBe(true);
  });
});
