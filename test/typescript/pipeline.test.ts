import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, test } from 'vitest';
import type { FileReport } from '../../server/src/analyze';
import { fileReportToJson } from '../../server/src/cli/json-output';
import { analyzeTs, findingsOf } from './ts-specs';

/** Bounds of a policy's value at a generated state, by the state's canonical key. */
function valueAt(report: FileReport, policy: 'optimal' | 'random' | 'worst', key: string): [number, number] {
  const s = report.model!.stateIndex.get(key);
  if (s === undefined) throw new Error(`no state ${key}`);
  const values = report.analysis![policy].values;
  return [values.lower[s], values.upper[s]];
}

function expectContains([lower, upper]: [number, number], exact: number): void {
  expect(lower).toBeLessThanOrEqual(exact + 1e-12);
  expect(upper).toBeGreaterThanOrEqual(exact - 1e-12);
  expect(upper - lower).toBeLessThanOrEqual(1e-6);
}

// Sutton and Barto, Reinforcement Learning, 2nd ed., Example 6.2 (random walk): states A..E, start C,
// +1 on the right exit, 0 elsewhere, no discount; the true values are 1/6, 2/6, 3/6, 4/6, 5/6.
const randomWalk = `import { defineMdp } from 'episcope';
const NAMES = ['left-end', 'A', 'B', 'C', 'D', 'E', 'right-end'];
export default defineMdp({
  name: 'random-walk',
  discount: 1,
  start: 'C',
  actions: () => ['left', 'right'],
  terminal: (s: string) => (s === 'right-end' ? 'goal' : s === 'left-end' ? 'neutral' : undefined),
  outcomes(s: string, action: string) {
    const i = NAMES.indexOf(s) + (action === 'right' ? 1 : -1);
    return [{ state: NAMES[i], probability: 1, reward: NAMES[i] === 'right-end' ? 1 : 0 }];
  },
});
`;

describe('enumerable TypeScript models: exact analysis like JSON specs', () => {
  test('random walk (Sutton and Barto 2nd ed., Example 6.2): random-policy values 1/6 .. 5/6, optimal 1', async () => {
    const report = await analyzeTs(randomWalk);
    expect(report.findings.filter((f) => f.severity !== 'info')).toEqual([]);
    expect(report.model?.stateCount).toBe(7);
    ['"A"', '"B"', '"C"', '"D"', '"E"'].forEach((key, i) => {
      expectContains(valueAt(report, 'random', key), (i + 1) / 6);
      expectContains(valueAt(report, 'optimal', key), 1);
    });
    // String states are labelled by the bare string.
    expect(report.model?.stateLabels?.[report.model.stateIndex.get('"C"')!]).toBe('C');
    // Generated states point at the function that produced them.
    const c = report.model!.stateIndex.get('"C"')!;
    const d = report.model!.stateIndex.get('"D"')!;
    expect(report.text.slice(report.model!.stateSpan[c].start, report.model!.stateSpan[c].end)).toBe('start');
    expect(report.text.slice(report.model!.stateSpan[d].start, report.model!.stateSpan[d].end)).toBe('outcomes');
  });

  test('the restocking example matches value iteration written independently in this test', async () => {
    const text = readFileSync(join(__dirname, '../../examples/shelf-restocking.mdp.ts'), 'utf8');
    const report = await analyzeTs(text);
    expect(report.findings.filter((f) => f.severity === 'error')).toEqual([]);
    // 9 stock levels x 7 weekdays, less the full shelf on Sunday and Monday mornings: weekend demand is at least 1.
    expect(report.model?.stateCount).toBe(9 * 7 - 2);
    expect(report.model?.stateIndex.has('{"stock":8,"weekday":0}')).toBe(false);
    // Independent transcription of the example's dynamics (same invented numbers), solved by value
    // iteration to a residual of 1e-13 (Bellman, 1957; the contraction bound gives the error).
    const demand = (d: number) =>
      d >= 5
        ? [
            [1, 0.2],
            [2, 0.3],
            [3, 0.3],
            [4, 0.2],
          ]
        : [
            [0, 0.3],
            [1, 0.4],
            [2, 0.2],
            [3, 0.1],
          ];
    let v = Array.from({ length: 9 }, () => new Array<number>(7).fill(0));
    for (let iteration = 0; iteration < 5000; iteration++) {
      let change = 0;
      const next = v.map((row) => [...row]);
      for (let stock = 0; stock <= 8; stock++) {
        for (let day = 0; day < 7; day++) {
          let best = -Infinity;
          for (const order of stock >= 8 ? [0] : [0, 2, 4]) {
            const onShelf = Math.min(8, stock + order);
            const bought = onShelf - stock;
            let q = 0;
            for (const [units, p] of demand(day)) {
              const sold = Math.min(units, onShelf);
              const left = onShelf - sold;
              q += p * (3 * sold - (bought + (bought > 0 ? 1.5 : 0)) - 0.1 * left + 0.95 * v[left][(day + 1) % 7]);
            }
            best = Math.max(best, q);
          }
          change = Math.max(change, Math.abs(best - v[stock][day]));
          next[stock][day] = best;
        }
      }
      v = next;
      if ((change * 0.95) / 0.05 < 1e-10) break;
    }
    expectContains([report.analysis!.start.optimal.lower, report.analysis!.start.optimal.upper], v[4][0]);
    // Reward terms keep their parts: sales are a bonus, the rest penalties, and no term-direction finding fires.
    expect(report.model?.termNames).toEqual(['sales', 'purchasing', 'holding']);
    expect(findingsOf(report, 'term-direction')).toEqual([]);
  });

  test('canonical keys: the same state written with another key order is one state', async () => {
    const text = `export default { discount: 0.5, start: { a: 0, b: 0 }, actions: () => ['x'],
  outcomes: (s) => [{ state: { b: (s.b + 1) % 2, a: 0 }, probability: 0.5, reward: 1 }, { state: { a: 0, b: (s.b + 1) % 2 }, probability: 0.5, reward: 1 }] };`;
    const report = await analyzeTs(text);
    expect(report.model?.stateIds).toEqual(['{"a":0,"b":0}', '{"a":0,"b":1}']);
    // Two states, reward 1 every step at discount 0.5: value 2 everywhere.
    expectContains([report.analysis!.start.optimal.lower, report.analysis!.start.optimal.upper], 2);
  });

  test('a start distribution', async () => {
    const text = `export default { discount: 0.9, startDistribution: [{ state: 1, probability: 0.25 }, { state: 2, probability: 0.75 }],
  actions: () => ['stop'], terminal: (s) => (s === 0 ? 'goal' : undefined), outcomes: (s) => [{ state: 0, probability: 1, reward: s }] };`;
    const report = await analyzeTs(text);
    expect(Array.from(report.model!.startProb)).toEqual([0.25, 0.75]);
    expectContains([report.analysis!.start.optimal.lower, report.analysis!.start.optimal.upper], 0.25 * 1 + 0.75 * 2);
  });

  test('findings about generated states show the state value and point at the producing function', async () => {
    const text = `export default {
  discount: 1,
  start: { at: 'dock' },
  actions: (s) => ['sail'],
  terminal: (s) => (s.at === 'home' ? 'goal' : s.at === 'reef' ? 'failure' : undefined),
  outcomes: (s) => [{ state: { at: 'home' }, probability: 0.5, reward: 1 }, { state: { at: 'reef' }, probability: 0.5, reward: 5 }],
};`;
    const report = await analyzeTs(text);
    const [finding] = findingsOf(report, 'objective-sign');
    expect(finding.message).toContain('{"at":"reef"}');
    expect(['start', 'outcomes']).toContain(report.text.slice(finding.span.start, finding.span.end));
  });

  test('a loop through the start state points at outcomes, which produced its transitions, not at start', async () => {
    // A patrol over rooms 0, 1, 2 whose every move pays +1 at discount 1: the return is unbounded.
    const text = `export default {
  discount: 1,
  start: { room: 0 },
  actions: () => ['next', 'leave'],
  outcomes(s, action) {
    if (action === 'leave') return [{ state: { room: -1 }, probability: 1, reward: 5 }];
    return [{ state: { room: (s.room + 1) % 3 }, probability: 1, reward: 1 }];
  },
  terminal: (s) => (s.room === -1 ? 'goal' : undefined),
};`;
    const report = await analyzeTs(text);
    for (const rule of ['unbounded-return', 'living-reward']) {
      const [finding] = findingsOf(report, rule);
      expect(report.text.slice(finding.span.start, finding.span.end), rule).toBe('outcomes');
      // Every move of the loop, the one out of the start state included, was produced by outcomes().
      expect(
        finding.related!.map((r) => report.text.slice(r.span.start, r.span.end)),
        rule,
      ).toEqual(['outcomes', 'outcomes', 'outcomes']);
      const moves = finding.trace!.filter((step) => step.action);
      expect(
        moves.map((step) => report.text.slice(step.span!.start, step.span!.end)),
        rule,
      ).toEqual(['outcomes', 'outcomes', 'outcomes']);
    }
  });
});

describe('TypeScript model rules', () => {
  test('enumeration-limit at the state cap, with rollout estimates instead', async () => {
    const text = `export default { discount: 0.9, start: 0, actions: () => ['more'], outcomes: (n) => [{ state: n + 1, probability: 1, reward: 1 }] };`;
    const report = await analyzeTs(text, { stateCap: 50, rollouts: 100 });
    const [finding] = findingsOf(report, 'enumeration-limit');
    expect(finding.message).toContain('enumeration stopped at the state cap of 50 states');
    expect(finding.message).toContain('e.g. 50');
    expect(report.text.slice(finding.span.start, finding.span.end)).toBe('outcomes');
    expect(report.analysis).toBeUndefined();
    // Each episode earns 1 per step, discounted by 0.9, until the step cap: 10 * (1 - 0.9^10000) = 10.
    expect(report.rollouts?.random?.return.mean).toBeCloseTo(10, 9);
  });

  test('nondeterministic-model: outcomes that change between calls, and a sampled model that does not replay', async () => {
    const enumerable = `let calls = 0;
export default { discount: 0.9, start: 0, actions: () => ['go'], terminal: (s) => (s >= 3 ? 'goal' : undefined),
  outcomes: (s) => [{ state: s + 1, probability: 1, reward: calls++ }] };`;
    const report = await analyzeTs(enumerable);
    const [finding] = findingsOf(report, 'nondeterministic-model');
    expect(finding.message).toMatch(
      /^outcomes\(0, "go"\) answered differently when called again with the same arguments: first 1 p=1 r=0, then 1 p=1 r=\d+/,
    );
    expect(report.analysis).toBeUndefined();

    const sampled = `let episodes = 0;
export default { discount: 0.9, start: (rng) => { episodes++; return 0; }, actions: () => ['go'],
  sample: (s, a, rng) => ({ state: s + 1, reward: episodes > 1000 ? 2 : 1, terminal: s >= 2 ? 'goal' : undefined }) };`;
    const replay = await analyzeTs(sampled, { rollouts: 1000 });
    expect(findingsOf(replay, 'nondeterministic-model')[0]?.message).toMatch(
      /^episode 0 of seed 1 took a different trajectory when replayed with the same seed/,
    );
  });

  test('episode-never-ends: discount 1, no horizon, rollouts that hit the step cap', async () => {
    const text = `export default { discount: 1, start: 0, actions: () => ['wait', 'stop'],
  sample: (s, a, rng) => ({ state: s, reward: -1, terminal: a === 'stop' && rng() < 0.0001 ? 'goal' : undefined }) };`;
    const report = await analyzeTs(text, { rollouts: 200, thresholds: { 'episode-never-ends.stepCap': 100 } });
    const [finding] = findingsOf(report, 'episode-never-ends');
    expect(finding.message).toMatch(/^\d+ of 200 rollouts \(\d+\.\d%\) ran 100 steps without ending/);
    expect(report.text.slice(finding.span.start, finding.span.end)).toBe('1');
    // The same model with a horizon is fine.
    const capped = await analyzeTs(text.replace('discount: 1,', 'discount: 1, horizon: 50,'), {
      rollouts: 200,
      thresholds: { 'episode-never-ends.stepCap': 100 },
    });
    expect(findingsOf(capped, 'episode-never-ends')).toEqual([]);
  });
});

describe('sampled TypeScript models: seeded rollouts with intervals', () => {
  // Each step pays 1 and ends the episode with probability 1/4: the length is geometric on {1, 2, ...}
  // with mean 4, so the undiscounted return has mean 4 and median 3 (P(L <= 2) = 0.4375, P(L <= 3) = 0.578).
  const geometric = `export default { name: 'coin', discount: 1, start: 0, actions: () => ['flip'],
  sample: (s, a, rng) => ({ state: s + 1, reward: 1, terminal: rng() < 0.25 ? 'goal' : undefined }) };`;

  test('mean with a 95% interval covering 4, percentiles, episode lengths, reach frequencies', async () => {
    const report = await analyzeTs(geometric, { rollouts: 4000, seed: 7 });
    const stats = report.rollouts!.random!;
    expect(report.analysis).toBeUndefined();
    expect(report.notAnalysed).toContain('sampled model');
    expect(stats.episodes).toBe(4000);
    expect(stats.return.ci95.lower).toBeLessThanOrEqual(4);
    expect(stats.return.ci95.upper).toBeGreaterThanOrEqual(4);
    expect(stats.return.percentiles.p50).toBe(3);
    expect(stats.length.mean).toBe(stats.return.mean);
    expect(stats.reach).toEqual({ goal: 1, failure: 0, neutral: 0, none: 0 });
    // The counter grows without bound: exploring it stops at the key cap, which an info says.
    expect(report.findings.map((f) => `${f.rule} ${f.severity}`)).toEqual(['empirical-model info']);
    expect(report.findings[0].message).toContain('exploration reached the cap of 5000 distinct state keys');
  });

  test('the same seed reproduces the figures exactly; another seed does not', async () => {
    const a = await analyzeTs(geometric, { rollouts: 500, seed: 3 });
    const b = await analyzeTs(geometric, { rollouts: 500, seed: 3 });
    const c = await analyzeTs(geometric, { rollouts: 500, seed: 4 });
    expect(a.rollouts).toEqual(b.rollouts);
    expect(a.rollouts!.random!.return.mean).not.toBe(c.rollouts!.random!.return.mean);
  });

  test('the battery-courier example: figures, no findings, and JSON output that carries them', async () => {
    const text = readFileSync(join(__dirname, '../../examples/battery-courier.mdp.ts'), 'utf8');
    const report = await analyzeTs(text, { rollouts: 1000 });
    // Its continuous states give more distinct keys than the empirical model's cap: one info, no warning.
    expect(report.findings.map((f) => `${f.rule} ${f.severity}`)).toEqual(['empirical-model info']);
    const stats = report.rollouts!.random!;
    expect(stats.return.ci95.lower).toBeLessThan(stats.return.mean);
    expect(stats.reach.goal + stats.reach.failure + stats.reach.none).toBeCloseTo(1, 12);
    const json = fileReportToJson(report);
    expect(json.analysis).toBeUndefined();
    expect(json.rollouts?.random?.episodes).toBe(1000);
    expect(json.rollouts?.random?.return.percentiles.p50).toBeCloseTo(stats.return.percentiles.p50, 6);
  });
});

describe('rollouts of exact models on request', () => {
  test('optimal and random policy: the Monte Carlo intervals cover the exact start values', async () => {
    const report = await analyzeTs(randomWalk, { rollouts: 4000, seed: 2 });
    const { optimal, random } = report.rollouts!;
    // Optimal: always right, return exactly 1; random: 1/2 from C (Example 6.2).
    expect(optimal!.return.mean).toBe(1);
    expect(optimal!.return.standardError).toBe(0);
    expect(random!.return.ci95.lower).toBeLessThanOrEqual(0.5);
    expect(random!.return.ci95.upper).toBeGreaterThanOrEqual(0.5);
    expect(optimal!.length.mean).toBe(3);
  });
});
