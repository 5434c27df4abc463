/**
 * The rule x source matrix: every rule fires on each kind of spec it declares in `sources` (JSON,
 * enumerable TypeScript, sampled TypeScript), and on no kind it does not declare. The enumerable
 * column includes a TypeScript twin of every JSON case that compiles: the same MDP written as
 * `outcomes(state, action)` over a table. Rules that read the compiled model must give the twin
 * exactly the findings they give the JSON spec (rule ids; positions differ by nature). Scenarios
 * and numbers are our own; the examples are the ones in examples/.
 */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import type { FileReport } from '../../server/src/analyze';
import type { EpiscopeConfig } from '../../server/src/config';
import { TERMINAL_OF_CODE } from '../../server/src/model/compiled';
import { RULES } from '../../server/src/rules/registry';
import { RULE_SOURCES, type RuleSource } from '../../server/src/rules/types';
import { checkSpec } from '../helpers/specs';
import { analyzeTs } from '../typescript/ts-specs';

const EXAMPLES = join(__dirname, '../../examples');

interface MatrixCase {
  name: string;
  source: RuleSource;
  /** The rule ids that must fire, exactly. */
  fires: string[];
  run(): Promise<FileReport> | FileReport;
  /** For JSON cases that compile and have no potential: check the TypeScript twin too. */
  twin?: boolean;
}

function firedRules(report: FileReport): string[] {
  return [...new Set(report.findings.map((f) => f.rule))].sort();
}

/**
 * The enumerable TypeScript twin of a compiled JSON model: the same states, actions, outcomes,
 * probabilities, rewards (split into the same terms), discount, horizon, objective and start.
 */
function enumerableTwin(report: FileReport): string {
  const model = report.model!;
  const spec = report.spec;
  const table: Record<
    string,
    Record<string, Array<{ state: string; probability: number; reward: number | Record<string, number> }>>
  > = {};
  const terminal: Record<string, string> = {};
  let needsRest = false;
  for (let s = 0; s < model.stateCount; s++) {
    const id = model.stateIds[s];
    const kind = TERMINAL_OF_CODE[model.terminal[s]];
    if (kind) terminal[id] = kind;
    const actions: Record<
      string,
      Array<{ state: string; probability: number; reward: number | Record<string, number> }>
    > = {};
    for (let c = model.choiceStart[s]; c < model.choiceStart[s + 1]; c++) {
      actions[model.actionNames[model.choiceAction[c]]] = [];
      for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++) {
        let reward: number | Record<string, number> = model.outcomeReward[k];
        if (model.termNames.length > 0) {
          const parts: Record<string, number> = {};
          let rest = model.outcomeReward[k];
          model.termNames.forEach((name, t) => {
            const value = model.outcomeTermReward[t][k];
            if (value !== 0) parts[name] = value;
            rest -= value;
          });
          if (Math.abs(rest) > 1e-12) {
            parts.rest = rest;
            needsRest = true;
          }
          reward = parts;
        }
        actions[model.actionNames[model.choiceAction[c]]].push({
          state: model.stateIds[model.outcomeTarget[k]],
          probability: model.outcomeProb[k],
          reward,
        });
      }
    }
    table[id] = actions;
  }
  const terms: Record<string, { direction: string; shaping?: boolean }> = {};
  for (const term of spec.rewardTerms)
    terms[term.name] = term.shaping ? { direction: term.direction, shaping: true } : { direction: term.direction };
  if (needsRest && spec.rewardTerms.length > 0) terms.rest = { direction: 'either' };
  const start = Array.from(model.startState, (s, i) => ({ state: model.stateIds[s], probability: model.startProb[i] }));
  const fields = [
    `  name: ${JSON.stringify(`${spec.name?.value ?? 'spec'} (twin)`)},`,
    `  objective: ${JSON.stringify(spec.objective)},`,
    `  discount: ${model.discount},`,
    model.horizon !== undefined ? `  horizon: ${model.horizon},` : '',
    spec.rewardTerms.length > 0 ? `  rewardTerms: ${JSON.stringify(terms)},` : '',
    start.length === 1
      ? `  start: ${JSON.stringify(start[0].state)},`
      : `  startDistribution: ${JSON.stringify(start)},`,
  ].filter((line) => line !== '');
  return `import { defineMdp } from 'episcope';
const TABLE: Record<string, Record<string, Array<{ state: string; probability: number; reward: number | Record<string, number> }>>> = ${JSON.stringify(table)};
const TERMINAL: Record<string, 'goal' | 'failure' | 'neutral'> = ${JSON.stringify(terminal)};
export default defineMdp({
${fields.join('\n')}
  actions: (s: string) => Object.keys(TABLE[s]),
  terminal: (s: string) => TERMINAL[s],
  outcomes: (s: string, a: string) => TABLE[s][a],
});
`;
}

function example(file: string, fires: string[], twin = true): MatrixCase {
  const text = readFileSync(join(EXAMPLES, file), 'utf8');
  return { name: `examples/${file}`, source: 'json', fires, twin, run: () => checkSpec(text) };
}

// A spec that does not compile, with one structural bug of each kind (a scenario of our own: a
// cart that should drive home). The graph rules still run on its declared part.
const brokenCart = `{
  "name": "broken-cart",
  "discont": 0.9,
  "discount": 0.9,
  "start": "a",
  "actions": ["go", "stay"],
  "rewardTerms": { "battery": { "direction": "penalty" } },
  "states": {
    "a": {}, "b": {}, "c": { "actions": [] }, "pit": { "actions": ["stay"] }, "lost": {},
    "home": { "terminal": "goal" }, "end": { "terminal": "neutral" }
  },
  "shaping": { "potential": { "home": 2 } },
  "transitions": [
    { "from": "a", "action": "go", "to": "b", "reward": { "battery": 0.5 } },
    { "from": "a", "action": "go", "to": "b", "reward": 0 },
    { "from": "a", "action": "stay", "to": { "a": 0.5, "pit": 0.499999999999999, "b": 1e-15 }, "reward": 0 },
    { "from": "b", "action": "go", "to": "gaol", "reward": 1 },
    { "from": "b", "action": "stay", "to": { "b": 0.5, "a": 0.4 }, "reward": 0 },
    { "from": "b", "action": "fly", "to": "home", "reward": 1 },
    { "from": "pit", "action": "stay", "to": "pit", "reward": 5000 },
    { "from": "lost", "action": "go", "to": { "home": 1.5 }, "reward": 0 },
    { "from": "end", "action": "go", "to": "a", "reward": 0 },
    { "from": "c", "action": "go", "to": "a", "reward": 1e400 }
  ]
}`;

// Compiles: a penalty that pays, a rounding-level outcome and one reward far above the others.
const scales = {
  name: 'scales',
  discount: 0.9,
  start: 'a',
  actions: ['go', 'stay'],
  rewardTerms: { battery: { direction: 'penalty' }, delivery: { direction: 'bonus' } },
  states: { a: {}, b: {}, g: { terminal: 'goal' }, x: { terminal: 'failure' } },
  transitions: [
    { from: 'a', action: 'go', to: { b: 0.999999999999999, x: 1e-15 }, reward: { battery: 0.5 } },
    { from: 'a', action: 'stay', to: 'a', reward: { battery: -1 } },
    { from: 'b', action: 'go', to: 'g', reward: { delivery: 5000 } },
    { from: 'b', action: 'stay', to: 'a', reward: { battery: -1 } },
  ],
};

// Compiles: staying put pays +1 a step, worth 1/(1 - 0.9) = 10 against 5 for the goal.
const loafer = {
  name: 'loafer',
  discount: 0.9,
  start: 'a',
  actions: ['go', 'stay'],
  states: { a: {}, g: { terminal: 'goal' } },
  transitions: [
    { from: 'a', action: 'go', to: 'g', reward: 5 },
    { from: 'a', action: 'stay', to: 'a', reward: 1 },
  ],
};

/** An enumerable counter 0, 1, 2, ... with `body` as its outcomes and `fields` added. */
function counter(body: string, fields = '', actions = "() => ['up']"): string {
  return `import { defineMdp } from 'episcope';
export default defineMdp({
  discount: 0.9,
  start: 0,${fields}
  actions: ${actions},
  terminal: (n: number) => (n >= 3 ? 'goal' : undefined),
  outcomes(n: number, action: string) {
    ${body}
  },
});
`;
}

/** A sampled walk 0, 1, 2, ... with `body` as its sample function body. */
function walk(body: string, fields = '', actions = "() => ['up']"): string {
  return `import { defineMdp } from 'episcope';
export default defineMdp({
  discount: 0.9,
  start: 0,${fields}
  actions: ${actions},
  sample(n: number, action: string, rng) {
    ${body}
  },
});
`;
}

const LIMITS: EpiscopeConfig = { thresholds: { 'model-error.callTimeoutMs': 2000 }, rollouts: 40 };
const ts =
  (text: string, config: EpiscopeConfig = {}) =>
  () =>
    analyzeTs(text, { ...LIMITS, ...config });

const CASES: MatrixCase[] = [
  {
    name: 'broken cart (JSON, does not compile)',
    source: 'json',
    fires: [
      'dead-end',
      'duplicate-transition',
      'missing-outcomes',
      'negative-probability',
      'non-finite-reward',
      'probability-sum',
      'reward-scale',
      'schema',
      'term-direction',
      'terminal-has-transitions',
      'terminal-potential',
      'tiny-probability',
      'trap-state',
      'undeclared-action',
      'undeclared-state',
      'unreachable-state',
      'unreachable-terminal',
    ],
    run: () => checkSpec(brokenCart),
  },
  {
    name: 'scales (JSON)',
    source: 'json',
    fires: ['reward-scale', 'term-direction', 'tiny-probability'],
    twin: true,
    run: () => checkSpec(scales),
  },
  {
    name: 'loafer (JSON)',
    source: 'json',
    fires: ['living-reward', 'reward-loop'],
    twin: true,
    run: () => checkSpec(loafer),
  },
  example('warehouse-picking.mdp.json', []),
  example('irrigation-valves.mdp.json', []),
  example('npc-patrol.mdp.json', ['unbounded-return']),
  example('rover-sampling.mdp.json', ['trap-state']),
  example('cleaning-robot-dock.mdp.json', ['reward-loop']),
  example('loading-dock-edge.mdp.json', ['failure-preferred']),
  example('greenhouse-vents.mdp.json', ['failure-preferred', 'objective-sign', 'term-direction']),
  example('maze-runner-shaping.mdp.json', ['reward-loop', 'shaping-changes-policy', 'shaping-not-potential']),
  example('parking-shaping-potential.mdp.json', ['shaping-changes-policy', 'terminal-potential'], false),
  example('pipeline-crawler-discount.mdp.json', ['goal-discounted-away']),
  example('kiosk-robot-shift.mdp.json', ['time-dependent-optimum']),
  example('airport-shuttle-horizon.mdp.json', ['horizon-too-short']),

  {
    name: 'enumerable: a state without actions',
    source: 'enumerable',
    fires: ['dead-end'],
    run: ts(
      counter('return [{ state: n + 1, probability: 1, reward: -1 }];', '', "(n: number) => (n === 2 ? [] : ['up'])"),
    ),
  },
  {
    name: 'enumerable: outcomes adding up to 0.5',
    source: 'enumerable',
    fires: ['probability-sum'],
    run: ts(counter('return [{ state: n + 1, probability: n === 1 ? 0.5 : 1, reward: -1 }];')),
  },
  {
    name: 'enumerable: outcomes throws',
    source: 'enumerable',
    fires: ['model-error'],
    run: ts(counter("if (n === 1) throw new Error('no'); return [{ state: n + 1, probability: 1, reward: -1 }];")),
  },
  {
    name: 'enumerable: a NaN reward',
    source: 'enumerable',
    fires: ['non-finite-reward'],
    run: ts(counter('return [{ state: n + 1, probability: 1, reward: n === 1 ? 0 / 0 : -1 }];')),
  },
  {
    name: 'enumerable: Math.random in outcomes',
    source: 'enumerable',
    fires: ['nondeterministic-model', 'unseeded-randomness'],
    run: ts(counter('return [{ state: n + 1, probability: 1, reward: Math.random() }];')),
  },
  {
    name: 'enumerable: an endless counter past the state cap, discount 1',
    source: 'enumerable',
    fires: ['enumeration-limit', 'episode-never-ends'],
    run: ts(
      counter('return [{ state: n + 1, probability: 1, reward: -1 }];')
        .replace('discount: 0.9', 'discount: 1')
        .replace("(n >= 3 ? 'goal' : undefined)", 'undefined'),
      { stateCap: 20, thresholds: { 'episode-never-ends.stepCap': 50 } },
    ),
  },
  {
    name: 'enumerable: a missing bracket',
    source: 'enumerable',
    fires: ['syntax'],
    run: ts(counter('return [{ state: n + 1, probability: 1, reward: -1 ];')),
  },
  {
    name: 'enumerable: a discount of 2',
    source: 'enumerable',
    fires: ['schema'],
    run: ts(counter('return [{ state: n + 1, probability: 1, reward: -1 }];').replace('discount: 0.9', 'discount: 2')),
  },

  {
    name: 'sampled: a state without actions',
    source: 'sampled',
    fires: ['dead-end'],
    run: ts(
      walk(
        "return { state: n + 1, reward: -1, terminal: n >= 3 ? 'goal' : undefined };",
        '',
        "(n: number) => (n === 2 ? [] : ['up'])",
      ),
    ),
  },
  {
    name: 'sampled: a missing bracket',
    source: 'sampled',
    fires: ['syntax'],
    run: ts(walk("return { state: n + 1, reward: -1, terminal: n >= 3 ? 'goal' : undefined ;")),
  },
  {
    name: 'sampled: sample throws',
    source: 'sampled',
    fires: ['model-error'],
    run: ts(
      walk(
        "if (n === 1) throw new Error('no'); return { state: n + 1, reward: -1, terminal: n >= 3 ? 'goal' : undefined };",
      ),
    ),
  },
  {
    name: 'sampled: an infinite reward',
    source: 'sampled',
    fires: ['empirical-model', 'non-finite-reward'],
    run: ts(walk("return { state: n + 1, reward: n === 1 ? Infinity : -1, terminal: n >= 3 ? 'goal' : undefined };")),
  },
  {
    name: 'sampled: Math.random in sample',
    source: 'sampled',
    fires: ['empirical-model', 'nondeterministic-model', 'unseeded-randomness'],
    run: ts(walk("return { state: n + 1, reward: -1, terminal: Math.random() < 0.5 ? 'goal' : undefined };")),
  },
  {
    name: 'sampled: discount 1, never ends',
    source: 'sampled',
    // The walk grows without bound: exploring it stops at the key cap (empirical-model, info).
    fires: ['empirical-model', 'episode-never-ends'],
    run: ts(walk('return { state: n + 1, reward: -1 };').replace('discount: 0.9', 'discount: 1'), {
      thresholds: { 'episode-never-ends.stepCap': 50 },
    }),
  },
  // The sampled examples: their planted bugs, found on the model built from the samples.
  ...(
    [
      ['stealth-guard-bonus.mdp.ts', ['reward-loop']],
      ['crane-drop-shortcut.mdp.ts', ['failure-preferred']],
      ['vacuum-alive-bonus.mdp.ts', ['living-reward', 'reward-loop']],
      ['arcade-coin-loop.mdp.ts', ['unbounded-return']],
      ['pump-overheat-never.mdp.ts', ['unreachable-terminal']],
      ['orchard-frost-sign.mdp.ts', ['failure-preferred', 'objective-sign', 'term-direction']],
      ['rover-progress-shaping.mdp.ts', ['shaping-not-potential']],
    ] as const
  ).map(([file, fires]): MatrixCase => ({
    name: `sampled: ${file}`,
    source: 'sampled',
    fires: [...fires],
    run: ts(readFileSync(join(EXAMPLES, file), 'utf8')),
  })),
  {
    name: 'sampled: a discount of 2',
    source: 'sampled',
    fires: ['schema'],
    run: ts(
      walk("return { state: n + 1, reward: -1, terminal: n >= 3 ? 'goal' : undefined };").replace(
        'discount: 0.9',
        'discount: 2',
      ),
    ),
  },
];

const declares = (rule: string, source: RuleSource) => RULES.find((r) => r.id === rule)!.sources.includes(source);
const fired = new Map<MatrixCase, string[]>();

describe('rule x source matrix', () => {
  it.each(CASES.map((c) => [c.name, c] as const))('%s fires exactly the rules listed', async (_name, matrixCase) => {
    const report = await matrixCase.run();
    expect(report.internalErrors).toEqual([]);
    const rules = firedRules(report);
    fired.set(matrixCase, rules);
    expect(rules).toEqual([...matrixCase.fires].sort());
    // A rule that fires on a kind of spec it does not declare has the wrong `sources`.
    for (const rule of rules) expect(declares(rule, matrixCase.source), `${rule} on ${matrixCase.source}`).toBe(true);
  });

  const twins = CASES.filter((c) => c.twin);
  it.each(twins.map((c) => [c.name, c] as const))(
    'the enumerable TypeScript twin of %s gets the same model findings',
    async (_name, matrixCase) => {
      const json = await matrixCase.run();
      expect(json.model).toBeDefined();
      const twin = await analyzeTs(enumerableTwin(json));
      expect(twin.internalErrors).toEqual([]);
      expect(twin.model?.stateCount).toBeGreaterThan(0);
      const expected = firedRules(json).filter((rule) => declares(rule, 'enumerable'));
      expect(firedRules(twin)).toEqual(expected);
      // Same MDP, same optimal value at the start (both are sound bounds of one number).
      const a = json.analysis!.start.optimal;
      const b = twin.analysis!.start.optimal;
      expect(Math.max(a.lower, b.lower)).toBeLessThanOrEqual(Math.min(a.upper, b.upper) + 1e-9);
      fired.set(
        { name: `twin of ${matrixCase.name}`, source: 'enumerable', fires: expected, run: () => twin },
        firedRules(twin),
      );
    },
  );

  it('every rule fires on every kind of spec it declares (coverage of the matrix)', () => {
    expect(fired.size).toBe(CASES.length + twins.length);
    for (const rule of RULES) {
      for (const source of RULE_SOURCES) {
        if (!rule.sources.includes(source)) continue;
        const covered = [...fired].some(([c, rules]) => c.source === source && rules.includes(rule.id));
        expect(covered, `${rule.id} on ${source}`).toBe(true);
      }
    }
  });
});
