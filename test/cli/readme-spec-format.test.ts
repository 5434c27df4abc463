/**
 * README.md as the user's manual of the spec format. The names it must explain are read from the
 * sources (the JSON Schema and the authoring types), so a new field or function that the README does
 * not mention fails here. Then the README's own examples, and two specs written from the README
 * alone (a newcomer's first JSON spec and TypeScript model), must load without a loader finding.
 */
import { readFileSync, writeFileSync } from 'node:fs';
import * as path from 'node:path';
import ts from 'typescript';
import { describe, expect, it } from 'vitest';
import { REPO_ROOT, cli, tempFolder } from './cli-harness';

const readme = readFileSync(path.join(REPO_ROOT, 'README.md'), 'utf8');
const manual = (() => {
  const start = readme.indexOf('## Writing a spec');
  return start < 0 ? '' : readme.slice(start, readme.indexOf('\n## ', start + 1));
})();

interface SchemaNode {
  properties?: Record<string, SchemaNode>;
  enum?: unknown[];
  $defs?: Record<string, SchemaNode>;
}
const schema = JSON.parse(readFileSync(path.join(REPO_ROOT, 'schemas', 'mdp.schema.json'), 'utf8')) as SchemaNode;

/** Every field name and enumerated value of the spec format, with where the schema has it. */
function schemaNames(): Array<{ where: string; name: string }> {
  const defs = schema.$defs ?? {};
  const names: Array<{ where: string; name: string }> = [];
  const add = (where: string, list: readonly unknown[]) =>
    list.forEach((name) => names.push({ where, name: String(name) }));
  add('top-level property', Object.keys(schema.properties ?? {}));
  add('shaping property', Object.keys(schema.properties?.shaping?.properties ?? {}));
  add('state property', Object.keys(defs.state?.properties ?? {}));
  add('terminal kind', defs.state?.properties?.terminal?.enum ?? []);
  add('transition property', Object.keys(defs.transition?.properties ?? {}));
  add('outcome property', Object.keys(defs.outcome?.properties ?? {}));
  add('reward term property', Object.keys(defs.rewardTerm?.properties ?? {}));
  add('term direction', defs.rewardTerm?.properties?.direction?.enum ?? []);
  add('objective', schema.properties?.objective?.enum ?? []);
  return names;
}

/**
 * The functions of the authoring types (server/src/define.ts) as a spec author calls or writes
 * them: exported functions, the function members of the definition interfaces, and the rng's call
 * signature and methods.
 */
function authoringCalls(): string[] {
  const file = path.join(REPO_ROOT, 'server', 'src', 'define.ts');
  const source = ts.createSourceFile(file, readFileSync(file, 'utf8'), ts.ScriptTarget.Latest, true);
  const calls = new Set<string>();
  const isFunctionType = (type: ts.TypeNode | undefined): boolean =>
    !!type &&
    (ts.isFunctionTypeNode(type) ||
      (ts.isUnionTypeNode(type) && type.types.some((t) => isFunctionType(ts.isParenthesizedTypeNode(t) ? t.type : t))));
  source.forEachChild((node) => {
    if (
      ts.isFunctionDeclaration(node) &&
      node.name &&
      node.modifiers?.some((m) => m.kind === ts.SyntaxKind.ExportKeyword)
    ) {
      calls.add(`${node.name.text}(`);
    }
    if (!ts.isInterfaceDeclaration(node)) return;
    const owner = node.name.text === 'Rng' ? 'rng' : '';
    for (const member of node.members) {
      if (ts.isCallSignatureDeclaration(member)) calls.add(`${owner}()`);
      const name = member.name && ts.isIdentifier(member.name) ? member.name.text : undefined;
      if (!name) continue;
      const isFunction =
        ts.isMethodSignature(member) || (ts.isPropertySignature(member) && isFunctionType(member.type));
      if (isFunction) calls.add(owner ? `${owner}.${name}(` : `${name}(`);
    }
  });
  return [...calls].sort();
}

describe('README.md, "Writing a spec"', () => {
  it('names every field, terminal kind and term direction of schemas/mdp.schema.json', () => {
    const names = schemaNames();
    // The schema's own structure, so that a renamed $def cannot empty the list silently.
    expect(names.filter((n) => n.where === 'top-level property').length).toBeGreaterThanOrEqual(11);
    expect(names.filter((n) => n.where === 'terminal kind').map((n) => n.name)).toEqual(['goal', 'failure', 'neutral']);
    expect(names.filter((n) => n.where === 'term direction').map((n) => n.name)).toEqual([
      'bonus',
      'penalty',
      'either',
    ]);
    expect(names.filter((n) => n.where === 'transition property').map((n) => n.name)).toEqual([
      'from',
      'action',
      'to',
      'reward',
    ]);
    const missing = names.filter(({ name }) => !manual.includes(`\`${name}\``) && !manual.includes(`"${name}"`));
    expect(missing, 'add these to the section "Writing a spec" of README.md').toEqual([]);
  });

  it('names every function of the authoring types (server/src/define.ts) and every rng method', () => {
    const calls = authoringCalls();
    for (const expected of [
      'defineMdp(',
      'actions(',
      'outcomes(',
      'terminal(',
      'start(',
      'sample(',
      'rng()',
      'rng.int(',
      'rng.pick(',
      'rng.normal(',
    ]) {
      expect(calls).toContain(expected);
    }
    const missing = calls.filter((call) => !manual.includes(call));
    expect(missing, 'add these to "TypeScript specs: the authoring types" in README.md').toEqual([]);
  });

  it('shows a complete JSON spec and a complete enumerable TypeScript model that check without any finding', async () => {
    const jsonExample = /```jsonc\n\/\/ (\S+\.mdp\.json)\n([\s\S]*?)```/.exec(manual);
    const tsExample = /```ts\n\/\/ (\S+\.mdp\.ts)\n([\s\S]*?)```/.exec(manual);
    expect(jsonExample, 'a ```jsonc block starting with // NAME.mdp.json').not.toBeNull();
    expect(tsExample, 'a ```ts block starting with // NAME.mdp.ts').not.toBeNull();
    const folder = tempFolder('readme-examples');
    writeFileSync(path.join(folder, jsonExample![1]), jsonExample![2]);
    writeFileSync(path.join(folder, tsExample![1]), tsExample![2]);
    const output = await checkJson(folder);
    expect(output.files.map((f) => f.path).sort()).toEqual([jsonExample![1], tsExample![1]].sort());
    for (const file of output.files) {
      expect(
        file.findings.map((f) => `${f.rule}: ${f.message}`),
        file.path,
      ).toEqual([]);
      expect(file.analysis, file.path).toBeDefined();
    }
    // The README says how many states the courier model has.
    const courier = output.files.find((f) => f.path === tsExample![1])!;
    expect(manual).toContain(`${courier.analysis!.states} states are reachable`);
  });
});

/**
 * Two specs written by reading only the README (scenarios of our own, invented numbers), as a
 * newcomer would write them: the first try must load without a schema, syntax or model error.
 */
describe("a newcomer's first specs, written from the README alone", () => {
  it('a 20-state JSON spec loads, compiles and gets the closed-form optimal return', async () => {
    // A tunnel-boring machine advances through 18 rings. "bore" finishes a ring with probability
    // 0.9 per hour (else it stays), "rush" tries two rings at once and collapses the face one time
    // in five. Every hour costs 1.
    const rings = 18;
    const ring = (i: number) => (i >= rings ? 'breakthrough' : `ring-${i}`);
    const lines = [
      '{',
      '  "$schema": "../schemas/mdp.schema.json",',
      '  "name": "tunnel-boring",',
      '  "discount": 1,',
      '  "start": { "ring-0": 1 },',
      '  "actions": ["bore", "rush"],',
      '  "rewardTerms": { "hours": { "direction": "penalty" }, "damage": { "direction": "penalty" } },',
      '  "states": {',
      ...Array.from({ length: rings }, (_, i) => `    "${ring(i)}": {},`),
      '    "breakthrough": { "terminal": "goal" },',
      '    "collapse": { "terminal": "failure" }, // trailing commas and comments are allowed',
      '  },',
      '  "transitions": [',
      ...Array.from({ length: rings }, (_, i) => [
        `    { "from": "${ring(i)}", "action": "bore", "to": { "${ring(i + 1)}": 0.9, "${ring(i)}": 0.1 }, "reward": { "hours": -1 } },`,
        `    { "from": "${ring(i)}", "action": "rush", "to": [`,
        `        { "state": "${ring(i + 2)}", "probability": 0.8 },`,
        `        { "state": "collapse", "probability": 0.2, "reward": { "hours": -1, "damage": -50 } }`,
        `      ], "reward": { "hours": -1 } },`,
      ]).flat(),
      '  ]',
      '}',
    ];
    const folder = tempFolder('newcomer-json');
    writeFileSync(path.join(folder, 'tunnel-boring.mdp.json'), lines.join('\n'));
    const [file] = (await checkJson(folder)).files;
    expect(file.findings.filter((f) => LOADER_RULES.has(f.rule)).map((f) => f.message)).toEqual([]);
    expect(file.analysis?.states).toBe(20);
    // Boring alone is optimal; each ring then takes a geometric number of hours with mean 1/0.9
    // (common practice: the mean number of trials to the first success is 1/p), so
    // V*(start) = -18/0.9 = -20.
    const optimal = file.analysis!.start.optimal;
    expect(Number(optimal.lower)).toBeLessThanOrEqual(-20 + 1e-9);
    expect(Number(optimal.upper)).toBeGreaterThanOrEqual(-20 - 1e-9);
    expect(Number(optimal.upper) - Number(optimal.lower)).toBeLessThan(1e-5);
  });

  it('an enumerable TypeScript model loads, runs and gets the closed-form goal probability', async () => {
    // A player at a fairground stall wins a coin with probability 0.45 per game and loses one
    // otherwise, starting with 3 coins; 6 coins win the prize, 0 coins end the day, and the player
    // may walk away at any time.
    const model = `
import { defineMdp } from 'episcope';

type Player = { coins: number; left: boolean };

export default defineMdp({
  name: 'fairground-stall',
  discount: 1,
  rewardTerms: { coins: { direction: 'either' } },
  start: { coins: 3, left: false },
  terminal: (p: Player) => (p.left ? 'neutral' : p.coins >= 6 ? 'goal' : p.coins <= 0 ? 'failure' : undefined),
  actions: (p: Player) => ['play', 'walk-away'],
  outcomes(p: Player, action: string) {
    if (action === 'walk-away') return [{ state: { coins: p.coins, left: true }, probability: 1, reward: 0 }];
    return [
      { state: { coins: p.coins + 1, left: false }, probability: 0.45, reward: { coins: 1 } },
      { state: { coins: p.coins - 1, left: false }, probability: 0.55, reward: { coins: -1 } },
    ];
  },
});
`;
    const folder = tempFolder('newcomer-ts');
    writeFileSync(path.join(folder, 'fairground-stall.mdp.ts'), model);
    const [file] = (await checkJson(folder)).files;
    expect(file.findings.filter((f) => LOADER_RULES.has(f.rule)).map((f) => f.message)).toEqual([]);
    // Coins 0..6 while playing (7 states) and the walk-away states for 1..5 coins.
    expect(file.analysis?.states).toBe(12);
    // Playing until the end is the gambler's ruin: from i coins with win probability p and
    // r = (1 - p) / p, the goal of N coins is reached with probability (1 - r^i) / (1 - r^N)
    // (Feller, An Introduction to Probability Theory and Its Applications, vol. 1, 3rd ed., ch. XIV;
    // the chapter from memory). Walking away never reaches the goal, so this is the best goal reach.
    const r = 0.55 / 0.45;
    expect(file.analysis!.start.maxGoalReach).toBeCloseTo((1 - r ** 3) / (1 - r ** 6), 8);
  });
});

/** The rules that say a spec could not be loaded as written. */
const LOADER_RULES = new Set(['schema', 'syntax', 'model-error']);

interface CheckedFile {
  path: string;
  findings: Array<{ rule: string; message: string }>;
  analysis?: {
    states: number;
    start: { optimal: { lower: number | string; upper: number | string }; maxGoalReach: number };
  };
}

async function checkJson(folder: string): Promise<{ files: CheckedFile[] }> {
  const result = await cli(['check', '.', '--format', 'json', '--fail-on', 'never'], { cwd: folder });
  expect(result.stderr).toBe('');
  expect(result.code).toBe(0);
  return JSON.parse(result.stdout) as { files: CheckedFile[] };
}
