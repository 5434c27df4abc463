/**
 * A bug of ours anywhere in analyzeFile (JSON and TypeScript loaders, compiler, TypeScript sandbox
 * host, analysis, rollouts, a rule, suppression, and whatever lies between them) must end in
 * FileReport.internalErrors, so that `episcope check` exits 2 as the CLI contract says, instead of
 * passing for an ordinary finding or a clean file. Each failure is planted with vi.mock (or
 * vi.spyOn) in a dependency of the stage, and only for texts or models that carry a marker.
 */
import { writeFileSync } from 'node:fs';
import * as path from 'node:path';
import { describe, expect, it, vi } from 'vitest';
import { analyzeFile } from '../../server/src/analyze';
import type { CompiledModel } from '../../server/src/model/compiled';
import { findRule } from '../../server/src/rules/registry';
import { resolveConfig } from '../../server/src/config';
import { cli, tempFolder } from '../cli/cli-harness';
import { chainSpec } from '../helpers/specs';
import { counterSpec } from '../typescript/ts-specs';

const LOADER_BOMB = 'loader-bomb';
const COMPILER_BOMB = 'compiler-bomb';
const SUPPRESSION_BOMB = 'suppression-bomb';
const SANDBOX_BOMB = 'sandbox-bomb';
const READER_BOMB = 'reader-bomb';
const ANALYSIS_BOMB = 'analysis-bomb';
const ROLLOUT_BOMB = 'rollout-bomb';
const RULE_BOMB = 'rule-bomb';

/** A stage that sees no text is planted through this switch (vi.hoisted: the mocks are hoisted too). */
const planted = vi.hoisted(() => ({ samplingCost: false }));

const carries = (model: CompiledModel, marker: string) => model.stateIds.some((id) => id.includes(marker));

vi.mock('ts-morph', async (importOriginal) => {
  const original = await importOriginal<typeof import('ts-morph')>();
  class PlantedProject extends original.Project {
    override createSourceFile(...args: Parameters<InstanceType<typeof original.Project>['createSourceFile']>) {
      if (typeof args[1] === 'string' && args[1].includes(READER_BOMB)) throw new Error('planted reader failure');
      return super.createSourceFile(...args);
    }
  }
  return { ...original, Project: PlantedProject };
});

vi.mock('../../server/src/analysis', async (importOriginal) => {
  const original = await importOriginal<typeof import('../../server/src/analysis')>();
  return {
    ...original,
    analyzeModel: (...args: Parameters<typeof original.analyzeModel>) => {
      if (carries(args[0], ANALYSIS_BOMB)) throw new Error('planted analysis failure');
      return original.analyzeModel(...args);
    },
  };
});

vi.mock('../../server/src/analysis/rollouts', async (importOriginal) => {
  const original = await importOriginal<typeof import('../../server/src/analysis/rollouts')>();
  return {
    ...original,
    exactModelRollouts: (...args: Parameters<typeof original.exactModelRollouts>) => {
      if (carries(args[0], ROLLOUT_BOMB)) throw new Error('planted rollout failure');
      return original.exactModelRollouts(...args);
    },
    samplingCost: (...args: Parameters<typeof original.samplingCost>) => {
      if (planted.samplingCost) throw new Error('planted failure between the stages');
      return original.samplingCost(...args);
    },
  };
});

vi.mock('../../server/src/load/json-tree', async (importOriginal) => {
  const original = await importOriginal<typeof import('../../server/src/load/json-tree')>();
  return {
    ...original,
    readJsonTree: (text: string, maxDepth: number) => {
      if (text.includes(LOADER_BOMB)) throw new Error('planted loader failure');
      return original.readJsonTree(text, maxDepth);
    },
  };
});

vi.mock('../../server/src/model/compiled', async (importOriginal) => {
  const original = await importOriginal<typeof import('../../server/src/model/compiled')>();
  class PlantedBuilder extends original.ModelBuilder {
    override addState(...args: Parameters<InstanceType<typeof original.ModelBuilder>['addState']>): number {
      if (args[0] === COMPILER_BOMB) throw new Error('planted compiler failure');
      return super.addState(...args);
    }
  }
  return { ...original, ModelBuilder: PlantedBuilder };
});

vi.mock('../../server/src/suppress', async (importOriginal) => {
  const original = await importOriginal<typeof import('../../server/src/suppress')>();
  return {
    ...original,
    suppressReport: (...args: Parameters<typeof original.suppressReport>) => {
      if (args[0].text.includes(SUPPRESSION_BOMB)) throw new Error('planted suppression failure');
      return original.suppressReport(...args);
    },
  };
});

vi.mock('../../server/src/sandbox/host', async (importOriginal) => {
  const original = await importOriginal<typeof import('../../server/src/sandbox/host')>();
  const start: typeof original.ModelSandbox.start = (...args) =>
    args[1].includes(SANDBOX_BOMB)
      ? Promise.reject(new Error('planted sandbox host failure'))
      : original.ModelSandbox.start(...args);
  // The constructor is private, so the class is wrapped rather than extended.
  const ModelSandbox = new Proxy(original.ModelSandbox, {
    get: (target, key, receiver) => (key === 'start' ? start : Reflect.get(target, key, receiver)),
  });
  return { ...original, ModelSandbox };
});

/** A valid chain whose first state is named `marker`. */
function markedSpec(marker: string): string {
  return JSON.stringify(
    chainSpec({
      start: marker,
      states: { [marker]: {}, b: {}, goal: { terminal: 'goal' } },
      transitions: [
        { from: marker, action: 'go', to: 'b', reward: -1 },
        { from: 'b', action: 'go', to: 'goal', reward: 10 },
      ],
    }),
  );
}

describe('internal failures land in internalErrors', () => {
  it('the spec without a planted failure has none (the planted mocks are otherwise transparent)', async () => {
    const report = await analyzeFile('clean.mdp.json', markedSpec('clean'));
    expect(report.internalErrors).toEqual([]);
    expect(report.model).toBeDefined();
  });

  it.each([
    [
      'the JSON loader',
      LOADER_BOMB,
      'the spec could not be read because of an internal error of Episcope (planted loader failure)',
    ],
    [
      'the compiler',
      COMPILER_BOMB,
      'the spec could not be compiled because of an internal error (planted compiler failure)',
    ],
    ['the analysis', ANALYSIS_BOMB, 'the analysis failed: planted analysis failure'],
    ['the rollouts', ROLLOUT_BOMB, 'the rollouts failed: planted rollout failure'],
    ['suppression', SUPPRESSION_BOMB, 'applying suppressions failed: planted suppression failure'],
  ])('a failure in %s', async (_stage, marker, expected) => {
    const report = await analyzeFile('bug.mdp.json', markedSpec(marker), { config: resolveConfig({ rollouts: 50 }) });
    expect(report.internalErrors).toHaveLength(1);
    expect(report.internalErrors[0]).toContain(expected);
    // Not disguised as a finding of the spec.
    expect(report.findings.map((f) => f.message).join('\n')).not.toContain('planted');
  });

  it('a failure in a rule: the other rules still run', async () => {
    const rule = findRule('reward-scale')!;
    const check = rule.check.bind(rule);
    const spy = vi.spyOn(rule, 'check').mockImplementation((ctx) => {
      if (ctx.text.includes(RULE_BOMB)) throw new Error('planted rule failure');
      check(ctx);
    });
    try {
      const report = await analyzeFile('bug.mdp.json', markedSpec(RULE_BOMB));
      expect(report.internalErrors).toEqual(['rule reward-scale failed: planted rule failure']);
      expect(report.analysis).toBeDefined();
      expect(report.findings.map((f) => f.message).join('\n')).not.toContain('planted');
    } finally {
      spy.mockRestore();
    }
  });

  it('a failure between the stages (outside every stage of its own) still gives a report', async () => {
    planted.samplingCost = true;
    try {
      const report = await analyzeFile('bug.mdp.json', markedSpec('between'), {
        config: resolveConfig({ rollouts: 50 }),
      });
      expect(report.internalErrors).toEqual(['the analysis of the spec failed: planted failure between the stages']);
      expect(report.notAnalysed).toBe(report.internalErrors[0]);
      expect(report.path).toBe('bug.mdp.json');
    } finally {
      planted.samplingCost = false;
    }
  });

  it('a failure of the TypeScript reader (the static fields)', async () => {
    const text = counterSpec(`    return [{ state: { n: s.n + 1 }, probability: 1, reward: -1 }];`).replace(
      "name: 'counter'",
      `name: '${READER_BOMB}'`,
    );
    const report = await analyzeFile('bug.mdp.ts', text);
    expect(report.internalErrors).toEqual([
      'the spec could not be read because of an internal error of Episcope (planted reader failure); please report it',
    ]);
    expect(report.model).toBeUndefined();
    expect(report.findings.map((f) => f.message).join('\n')).not.toContain('planted');
  });

  it('a failure in the analysis of the empirical model of a sampled model', async () => {
    const folder = tempFolder('internal-sampled');
    const file = path.join(folder, 'bug.mdp.ts');
    // The keys of the sampled states carry the marker, so only this model's analysis fails.
    const text = `export default { discount: 0.9, start: '${ANALYSIS_BOMB}-0', actions: () => ['go'], sample: (s) => s === '${ANALYSIS_BOMB}-0' ? { state: '${ANALYSIS_BOMB}-1', reward: -1 } : { state: s, reward: 1, terminal: 'goal' } };`;
    writeFileSync(file, text);
    const report = await analyzeFile(file, text, { config: resolveConfig({ rollouts: 20 }) });
    expect(report.internalErrors).toEqual(['the analysis of the empirical model failed: planted analysis failure']);
  });

  it('a failure of the TypeScript sandbox host (not of the model code)', async () => {
    const folder = tempFolder('internal');
    const file = path.join(folder, 'bug.mdp.ts');
    const text = counterSpec(`    return [{ state: { n: s.n + 1 }, probability: 1, reward: -1 }];`).replace(
      "name: 'counter'",
      `name: '${SANDBOX_BOMB}'`,
    );
    writeFileSync(file, text);
    const report = await analyzeFile(file, text);
    expect(report.internalErrors).toEqual(['running the model failed: planted sandbox host failure']);
    expect(report.model).toBeUndefined();
  });

  it('episcope check exits 2 and says so, with the error in the JSON output', async () => {
    const folder = tempFolder('internal-cli');
    writeFileSync(path.join(folder, 'bug.mdp.json'), markedSpec(LOADER_BOMB));
    const result = await cli(['check', folder, '--format', 'json'], { cwd: folder });
    expect(result.code).toBe(2);
    expect(result.stderr).toContain('internal errors occurred while checking');
    const output = JSON.parse(result.stdout) as { files: Array<{ internalErrors?: string[] }> };
    expect(output.files[0].internalErrors?.[0]).toContain('planted loader failure');
  });
});
