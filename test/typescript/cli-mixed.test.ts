import { copyFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, test } from 'vitest';
import { REPO_ROOT, cli, expectContract, tempFolder } from '../cli/cli-harness';

/** `episcope check` on a folder that mixes JSON and TypeScript specs. */
describe('episcope check on a folder of JSON and TypeScript specs', () => {
  const folder = tempFolder('mixed');
  copyFileSync(join(REPO_ROOT, 'examples/warehouse-picking.mdp.json'), join(folder, 'warehouse-picking.mdp.json'));
  copyFileSync(join(REPO_ROOT, 'examples/shelf-restocking.mdp.ts'), join(folder, 'shelf-restocking.mdp.ts'));
  copyFileSync(join(REPO_ROOT, 'examples/battery-courier.mdp.ts'), join(folder, 'battery-courier.mdp.ts'));
  writeFileSync(
    join(folder, 'spinner.mdp.ts'),
    `export default { discount: 0.9, start: 0, actions: () => ['spin'], outcomes(s) {\n  while (true) {}\n} };\n`,
  );

  test('exact values for the enumerable model, intervals for the sampled one, a model-error for the hostile one', async () => {
    const result = await cli(['check', folder, '--format', 'json', '--rollouts', '500', '--seed', '3'], {
      cwd: folder,
    });
    expect(result.code).toBe(1);
    const output = JSON.parse(result.stdout);
    expectContract(output, false);
    const byPath = new Map<string, any>(output.files.map((f: any) => [f.path, f]));
    const shelf = byPath.get('shelf-restocking.mdp.ts');
    expect(
      shelf.analysis.exact === true || shelf.analysis.start.optimal.upper - shelf.analysis.start.optimal.lower <= 1e-5,
    ).toBe(true);
    expect(shelf.analysis.states).toBe(61);
    // --rollouts on an exact model adds the optimal and the random policy's return distribution.
    expect(shelf.rollouts.optimal.episodes).toBe(500);
    expect(shelf.rollouts.random.return.ci95.lower).toBeLessThan(shelf.rollouts.random.return.ci95.upper);
    const courier = byPath.get('battery-courier.mdp.ts');
    expect(courier.analysis).toBeUndefined();
    expect(courier.rollouts.random.episodes).toBe(500);
    expect(courier.rollouts.random.seed).toBe(3);
    expect(Object.keys(courier.rollouts.random.return.percentiles)).toEqual(['p5', 'p25', 'p50', 'p75', 'p95']);
    const spinner = byPath.get('spinner.mdp.ts');
    expect(spinner.findings.map((f: any) => [f.rule, f.line])).toEqual([['model-error', 2]]);
    expect(byPath.get('warehouse-picking.mdp.json').analysis.exact).toBeDefined();
  });

  test('--no-exec runs no model code: static checks only', async () => {
    const result = await cli(['check', folder, '--format', 'json', '--no-exec'], { cwd: folder });
    const output = JSON.parse(result.stdout);
    const spinner = output.files.find((f: any) => f.path === 'spinner.mdp.ts');
    expect(spinner.findings).toEqual([]);
    expect(spinner.notAnalysed).toContain('not run');
    expect(output.files.find((f: any) => f.path === 'battery-courier.mdp.ts').rollouts).toBeUndefined();
  });

  test('the text output prints the sampled figures', async () => {
    const result = await cli(['check', join(folder, 'battery-courier.mdp.ts'), '--seed', '5'], { cwd: folder });
    expect(result.code).toBe(0);
    expect(result.stdout).toMatch(
      /rollouts \(random policy, 1000 episodes, seed 5\): return -?\d+(\.\d+)? \(95% interval -?\d/,
    );
    expect(result.stdout).toMatch(/percentiles 5\/25\/50\/75\/95: /);
  });
});
