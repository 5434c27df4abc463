/**
 * A bug of ours anywhere in analyzeFile (loader, compiler, TypeScript sandbox host, suppression)
 * must end in FileReport.internalErrors, so that `episcope check` exits 2 as the CLI contract says,
 * instead of passing for an ordinary finding or a clean file. Each failure is planted with
 * vi.mock in a dependency of the stage, and only for texts that carry a marker.
 */
import { writeFileSync } from 'node:fs';
import * as path from 'node:path';
import { describe, expect, it, vi } from 'vitest';
import { analyzeFile } from '../../server/src/analyze';
import { cli, tempFolder } from '../cli/cli-harness';
import { chainSpec } from '../helpers/specs';
import { counterSpec } from '../typescript/ts-specs';

const LOADER_BOMB = 'loader-bomb';
const COMPILER_BOMB = 'compiler-bomb';
const SUPPRESSION_BOMB = 'suppression-bomb';
const SANDBOX_BOMB = 'sandbox-bomb';

vi.mock('jsonc-parser', async (importOriginal) => {
  const original = await importOriginal<typeof import('jsonc-parser')>();
  return {
    ...original,
    parseTree: (
      text: string,
      ...rest: Parameters<typeof original.parseTree> extends [string, ...infer R] ? R : never
    ) => {
      if (text.includes(LOADER_BOMB)) throw new Error('planted loader failure');
      return original.parseTree(text, ...rest);
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
    ['suppression', SUPPRESSION_BOMB, 'applying suppressions failed: planted suppression failure'],
  ])('a failure in %s', async (_stage, marker, expected) => {
    const report = await analyzeFile('bug.mdp.json', markedSpec(marker));
    expect(report.internalErrors).toHaveLength(1);
    expect(report.internalErrors[0]).toContain(expected);
    // Not disguised as a finding of the spec.
    expect(report.findings.map((f) => f.message).join('\n')).not.toContain('planted');
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
