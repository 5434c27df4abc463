import { readdirSync } from 'node:fs';
import { join } from 'node:path';
import ts from 'typescript';
import { describe, expect, test } from 'vitest';
import { defineMdp } from '../../server/src/define';

const root = join(__dirname, '..', '..');

/** Type-checks files with `episcope` mapped to the authoring types (server/src/define.ts). */
function typeErrors(files: string[], extra: Record<string, string> = {}): string[] {
  const options: ts.CompilerOptions = {
    strict: true,
    noEmit: true,
    target: ts.ScriptTarget.ES2022,
    module: ts.ModuleKind.ESNext,
    moduleResolution: ts.ModuleResolutionKind.Bundler,
    baseUrl: root,
    paths: { episcope: ['server/src/define.ts'] },
    types: [],
    lib: ['lib.es2022.d.ts'],
  };
  const host = ts.createCompilerHost(options);
  const readFile = host.readFile.bind(host);
  host.readFile = (name) => extra[name] ?? readFile(name);
  const fileExists = host.fileExists.bind(host);
  host.fileExists = (name) => name in extra || fileExists(name);
  const program = ts.createProgram([...files, ...Object.keys(extra)], options, host);
  return ts.getPreEmitDiagnostics(program).map((d) => ts.flattenDiagnosticMessageText(d.messageText, '\n'));
}

describe('the authoring types (defineMdp)', () => {
  test('defineMdp is the identity', () => {
    const definition = {
      discount: 0.9,
      start: 0,
      actions: () => ['a'],
      outcomes: () => [{ state: 0, probability: 1, reward: 0 }],
    };
    expect(defineMdp(definition)).toBe(definition);
  });

  test('the TypeScript examples type-check against them', () => {
    const examples = readdirSync(join(root, 'examples')).filter((name) => name.endsWith('.mdp.ts'));
    expect(examples.length).toBeGreaterThanOrEqual(2);
    expect(typeErrors(examples.map((name) => join(root, 'examples', name)))).toEqual([]);
  });

  test('they catch authoring mistakes: a misspelt terminal kind, an undeclared reward term, a missing discount', () => {
    const bad = join(root, 'test/typescript/__bad__.mdp.ts');
    const errors = typeErrors([], {
      [bad]: `import { defineMdp } from 'episcope';
export const a = defineMdp({ discount: 0.9, start: 0, actions: () => ['go'], terminal: () => 'gaol',
  outcomes: (s: number) => [{ state: s, probability: 1, reward: 0 }] });
export const b = defineMdp({ discount: 0.9, start: 0, rewardTerms: { time: { direction: 'penalty' } }, actions: () => ['go'],
  outcomes: (s: number) => [{ state: s, probability: 1, reward: { tme: -1 } }] });
export const c = defineMdp({ start: 0, actions: () => ['go'], outcomes: (s: number) => [{ state: s, probability: 1, reward: 0 }] });
`,
    });
    expect(errors.length).toBeGreaterThanOrEqual(3);
    expect(errors.join('\n')).toMatch(/gaol/);
    expect(errors.join('\n')).toMatch(/tme/);
    expect(errors.join('\n')).toMatch(/discount/);
  });
});
