/**
 * Warm starts (analysis/warm-start.ts): an analysis that starts from an earlier solution must give
 * the same findings and, within the precision, the same bounds as a cold one, however wrong the
 * guess. References outside the project: mathjs `lusolve` on the linear system of a fixed policy
 * (Puterman, Markov Decision Processes, 1994, section 6.1), and the best value over every
 * deterministic policy (Puterman 1994, Theorem 6.2.7, discounted; Bertsekas and Tsitsiklis 1991
 * for proper policies at discount 1). The random models and the warehouse spec are our own.
 */
import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { analyzeModel } from '../../server/src/analysis';
import { scaledWidth } from '../../server/src/analysis/interval-iteration';
import type { Analysis } from '../../server/src/analysis/types';
import type { WarmStart } from '../../server/src/analysis/warm-start';
import { analyzeJsonText, type FileReport } from '../../server/src/analyze';
import { TERMINAL_CODE, type CompiledModel } from '../../server/src/model/compiled';
import { gamblersRuinWalk as walk, ruin } from '../helpers/gamblers-ruin';
import { slipperyGridSpec } from '../../scripts/bench/generators';
import { warehouseSpecText } from '../lsp/warehouse-spec';
import { allPolicies, evaluate, properModel, uniform } from '../helpers/policy-values';
import { randomModel, seededRandom } from '../reference/gridworlds';

const PRECISION = 1e-6;
const ROOT = join(__dirname, '..', '..');

/** The best (maximize) or worst value per state over every deterministic policy, by enumeration. */
function bestOverPolicies(model: CompiledModel, maximize: boolean): number[] {
  const best = new Array<number>(model.stateCount).fill(maximize ? -Infinity : Infinity);
  for (const policy of allPolicies(model)) {
    const values = evaluate(model, (s, c) => (policy[s] === c ? 1 : 0));
    for (let s = 0; s < values.length; s++)
      best[s] = maximize ? Math.max(best[s], values[s]) : Math.min(best[s], values[s]);
  }
  return best;
}

function expectInside(values: { lower: Float64Array; upper: Float64Array }, exact: number[], label: string): void {
  for (let s = 0; s < exact.length; s++) {
    const slack = 1e-9 * Math.max(1, Math.abs(exact[s]));
    expect(values.lower[s], `${label}: lower bound of state ${s}`).toBeLessThanOrEqual(exact[s] + slack);
    expect(values.upper[s], `${label}: upper bound of state ${s}`).toBeGreaterThanOrEqual(exact[s] - slack);
    expect(scaledWidth(values.lower[s], values.upper[s]), `${label}: width at state ${s}`).toBeLessThanOrEqual(
      PRECISION,
    );
  }
}

/** Guesses that are wrong in the ways a stale solution can be: far off, noisy, partly missing, of another discount, of other states. */
function wrongGuesses(model: CompiledModel, seed: number): Array<[string, WarmStart]> {
  const solution = analyzeModel(model, { precision: PRECISION, keepSolution: true }).solution!;
  const random = seededRandom(seed);
  const map = (f: (v: number, s: number) => number): WarmStart => ({
    ...solution,
    values: Object.fromEntries(Object.entries(solution.values).map(([name, v]) => [name, v.map((x, s) => f(x, s))])),
  });
  return [
    ['every value 1e6', map(() => 1e6)],
    ['every value -1e6', map(() => -1e6)],
    ['noise of +-50', map((v) => v + 100 * (random() - 0.5))],
    ['half the states missing', map((v, s) => (s % 2 === 0 ? NaN : v))],
    ['solved at another discount', { ...map((v) => -v), discount: model.discount }],
    [
      'another model under the same state ids',
      analyzeModel(randomModel(seed + 1000, model.stateCount, 3, 3, model.discount, 1, !model.maximize), {
        precision: PRECISION,
        keepSolution: true,
      }).solution!,
    ],
  ];
}

describe('a wrong guess still gives sound bounds (mathjs lusolve, every deterministic policy)', () => {
  for (let seed = 1; seed <= 6; seed++) {
    const discount = [0.5, 0.9, 0.99, 0.999][seed % 4];
    const model = randomModel(seed, 6, 3, 3, discount, 1, seed % 2 === 1);
    const random = evaluate(model, uniform(model));
    const best = bestOverPolicies(model, model.maximize);
    const worst = bestOverPolicies(model, !model.maximize);
    for (const [label, guess] of wrongGuesses(model, seed)) {
      it(`seed ${seed}, discount ${discount}: ${label}`, () => {
        const analysis = analyzeModel(model, { precision: PRECISION, startFrom: guess });
        expect(analysis.warmStarts).toBeGreaterThan(0);
        expectInside(analysis.random.values, random, 'random policy');
        expectInside(analysis.optimal.values, best, 'optimal value');
        expectInside(analysis.worst.values, worst, 'worst value');
      });
    }
  }
  for (let seed = 11; seed <= 14; seed++) {
    const model = properModel(seed, 6, 3);
    const random = evaluate(model, uniform(model));
    const best = bestOverPolicies(model, true);
    const goal = evaluate(model, uniform(model), 1, (k) =>
      model.terminal[model.outcomeTarget[k]] === TERMINAL_CODE.goal ? 1 : 0,
    );
    const length = evaluate(model, uniform(model), 1, () => 1);
    for (const [label, guess] of wrongGuesses(model, seed)) {
      it(`discount 1, proper model ${seed}: ${label}`, () => {
        const analysis = analyzeModel(model, { precision: PRECISION, startFrom: guess });
        expect(analysis.warmStarts).toBeGreaterThan(0);
        expectInside(analysis.random.values, random, 'random policy');
        expectInside(analysis.optimal.values, best, 'optimal value');
        for (let s = 0; s < model.stateCount; s++) {
          if (model.terminal[s] !== 0) continue;
          expect(Math.abs(analysis.random.reach.goal[s] - goal[s]), `random goal reach at ${s}`).toBeLessThanOrEqual(
            PRECISION,
          );
          expect(Math.abs(analysis.random.expectedLength[s] - length[s]), `random length at ${s}`).toBeLessThanOrEqual(
            PRECISION,
          );
        }
      });
    }
  }
});

/** Two analyses agree: the same infinite values, finite ones within the precision of each other. */
function expectSameAnalysis(warm: Analysis, cold: Analysis, label: string): void {
  const close = (a: number, b: number, what: string): void => {
    if (!Number.isFinite(a) || !Number.isFinite(b)) expect(a, what).toBe(b);
    else
      expect(Math.abs(a - b), `${what}: ${a} against ${b}`).toBeLessThanOrEqual(
        2 * PRECISION * Math.max(1, Math.abs(b) / 1000),
      );
  };
  const n = cold.model.stateCount;
  expect(warm.model.stateIds).toEqual(cold.model.stateIds);
  for (const which of ['optimal', 'worst', 'random'] as const) {
    for (let s = 0; s < n; s++) {
      close(
        warm[which].values.lower[s],
        cold[which].values.lower[s],
        `${label}: ${which} lower at ${cold.model.stateIds[s]}`,
      );
      close(
        warm[which].values.upper[s],
        cold[which].values.upper[s],
        `${label}: ${which} upper at ${cold.model.stateIds[s]}`,
      );
      close(
        warm[which].expectedLength[s],
        cold[which].expectedLength[s],
        `${label}: ${which} length at ${cold.model.stateIds[s]}`,
      );
      for (const kind of ['goal', 'failure', 'neutral', 'none'] as const) {
        close(
          warm[which].reach[kind][s],
          cold[which].reach[kind][s],
          `${label}: ${which} ${kind} reach at ${cold.model.stateIds[s]}`,
        );
      }
    }
  }
  for (let s = 0; s < n; s++)
    close(warm.maxGoalReach[s], cold.maxGoalReach[s], `${label}: best goal reach at ${cold.model.stateIds[s]}`);
  expect(warm.precision, `${label}: widest bound`).toBeLessThanOrEqual(
    Math.max(PRECISION, cold.precision) * (1 + 1e-9),
  );
}

function expectSameReport(warm: FileReport, cold: FileReport, label: string): void {
  const shown = (report: FileReport) =>
    report.findings.map((f) => ({ rule: f.rule, severity: f.severity, span: f.span, message: f.message }));
  expect(shown(warm), `${label}: findings`).toEqual(shown(cold));
  expect(warm.notAnalysed).toEqual(cold.notAnalysed);
  expect(warm.internalErrors).toEqual([]);
  if (cold.analysis) expectSameAnalysis(warm.analysis!, cold.analysis, label);
  else expect(warm.analysis).toBeUndefined();
}

/** The edit's report started from the original's solution, against a cold report of the edit. */
function warmAgainstCold(original: string, edited: string, label: string): { warm: FileReport; cold: FileReport } {
  const first = analyzeJsonText('spec.mdp.json', original, { analysis: true, keepSolution: true });
  const warm = analyzeJsonText('spec.mdp.json', edited, {
    analysis: true,
    startFrom: first.analysis?.solution,
    keepSolution: true,
  });
  const cold = analyzeJsonText('spec.mdp.json', edited, { analysis: true });
  expectSameReport(warm, cold, label);
  return { warm, cold };
}

describe('warm and cold give the same findings and bounds', () => {
  const specs = [
    ...readdirSync(join(ROOT, 'examples'))
      .filter((f) => f.endsWith('.mdp.json'))
      .map((f) => join('examples', f)),
    ...readdirSync(join(ROOT, 'test/fixtures/classic'))
      .filter((f) => f.endsWith('.mdp.json'))
      .map((f) => join('test/fixtures/classic', f)),
  ];
  for (const file of specs) {
    it(`${file}, re-analysed from its own solution`, () => {
      const text = readFileSync(join(ROOT, file), 'utf8');
      warmAgainstCold(text, text, file);
    });
  }

  const warehouse = warehouseSpecText(1000);
  it('a 1k-state spec after a reward edit, and the warm path does less work', () => {
    const edited = warehouse
      .replace('"action":"hop","to":"b', '"action":"hop","reward":-3,"to":"b')
      .replace(/("action":"hop","reward":-3,"to":"b\d+"),"reward":-1/, '$1');
    expect(edited).not.toBe(warehouse);
    const { warm, cold } = warmAgainstCold(warehouse, edited, 'reward edit');
    expect(warm.analysis!.warmStarts).toBeGreaterThan(0);
    expect(cold.analysis!.warmStarts).toBe(0);
    const work = (a: Analysis) => a.sweeps + a.krylovIterations;
    expect(work(warm.analysis!)).toBeLessThan(work(cold.analysis!));
  });
  it('a 1k-state spec whose states were renamed (their guesses are dropped, the rest kept)', () => {
    const edited = warehouse.replace(/"b(\d*7)"/g, '"bay$1"');
    expect(edited).toContain('"bay17"');
    const { warm } = warmAgainstCold(warehouse, edited, 'rename');
    expect(warm.analysis!.warmStarts).toBeGreaterThan(0);
  });
  it('a 1k-state spec whose discount changed', () => {
    warmAgainstCold(warehouse, warehouse.replace('"discount": 0.95', '"discount": 0.9'), 'discount 0.9');
    warmAgainstCold(warehouse, warehouse.replace('"discount": 0.95', '"discount": 1'), 'discount 1');
  });
  it('a grid with a cell walled off (a state removed), at discount 0.99 and 1', () => {
    for (const discount of [0.99, 1]) {
      const spec = slipperyGridSpec({ size: 12, discount });
      warmAgainstCold(JSON.stringify(spec), JSON.stringify(withoutCell(spec, 'r4c7')), `walled grid at ${discount}`);
      warmAgainstCold(JSON.stringify(withoutCell(spec, 'r4c7')), JSON.stringify(spec), `opened grid at ${discount}`);
    }
  });
  it("a 100x100 grid after a step reward edit in its middle: the same bounds, and the worst values' near ties cost few solves", () => {
    // The worst values nearly tie everywhere (every way of staying clear of the ends is about as
    // long), so Howard's step alone moved the edit's effect one cell per round: 62 solves, against
    // 22 with the improving sweeps (policy-iteration.ts, improveBySweeps) and 19 for a cold start.
    const text = JSON.stringify(slipperyGridSpec({ size: 100, discount: 0.99 }));
    const at = text.indexOf('"reward":-1', text.indexOf('"from":"r50c50"'));
    const edited = `${text.slice(0, at)}"reward":-2${text.slice(at + '"reward":-1'.length)}`;
    const { warm } = warmAgainstCold(text, edited, 'grid reward edit');
    expect(warm.analysis!.warmStarts).toBeGreaterThan(0);
    expect(warm.analysis!.solves).toBeLessThanOrEqual(30);
  });
});

/** The grid spec with one cell removed: moves into it bounce back, as moves into a wall do. */
function withoutCell(spec: Record<string, unknown>, cell: string): Record<string, unknown> {
  const states = { ...(spec.states as Record<string, unknown>) };
  delete states[cell];
  type Outcome = { state: string; probability: number; reward: number };
  const transitions = (spec.transitions as Array<{ from: string; action: string; to: Outcome[] }>)
    .filter((t) => t.from !== cell)
    .map((t) => {
      const merged = new Map<string, Outcome>();
      for (const o of t.to) {
        const state = o.state === cell ? t.from : o.state;
        const known = merged.get(state);
        if (known) known.probability += o.probability;
        else merged.set(state, { ...o, state });
      }
      return { ...t, to: [...merged.values()] };
    });
  return { ...spec, states, transitions };
}

/** The warm start without the parts named `suffix` (the earlier error directions or policies). */
function without(solution: WarmStart, suffix: string): WarmStart {
  return {
    ...solution,
    values: Object.fromEntries(Object.entries(solution.values).filter(([name]) => !name.endsWith(suffix))),
  };
}

// Gambler's ruin with a fair coin on 0..N (test/helpers/gamblers-ruin.ts: W. Feller, vol. 1, 3rd
// ed., ch. XIV): from i the walk ends at N with probability i/N after i(N - i) steps on average.
describe("an earlier analysis's error direction and policies (gambler's ruin, Feller vol. 1, ch. XIV)", () => {
  const n = 400;
  const check = (analysis: Analysis, prize: number, label: string) => {
    for (const i of [1, n / 2, n - 1]) {
      const s = analysis.model.stateIndex.get(`s${i}`)!;
      const truth = ruin(n, 0.5, i);
      const value = prize * truth.goal;
      expect(analysis.random.values.lower[s], `${label}: value at ${i}`).toBeLessThanOrEqual(value + 1e-12);
      expect(analysis.random.values.upper[s], `${label}: value at ${i}`).toBeGreaterThanOrEqual(value - 1e-12);
      expect(Math.abs(analysis.random.reach.goal[s] - truth.goal), `${label}: reach at ${i}`).toBeLessThanOrEqual(
        PRECISION,
      );
      const steps = truth.duration;
      expect(Math.abs(analysis.random.expectedLength[s] - steps), `${label}: length at ${i}`).toBeLessThanOrEqual(
        PRECISION * Math.max(1, steps / 1000),
      );
    }
  };

  it('after a reward edit, the kept direction is checked and used: fewer solves, the same closed forms', () => {
    const first = analyzeModel(walk(n, 0.5, n / 2, 1), { precision: PRECISION, keepSolution: true });
    const solution = first.solution!;
    expect(Object.keys(solution.values).some((name) => name.endsWith(':error-direction'))).toBe(true);
    const edited = walk(n, 0.5, n / 2, 2);
    const withDirection = analyzeModel(edited, { precision: PRECISION, startFrom: solution });
    const withoutDirection = analyzeModel(edited, {
      precision: PRECISION,
      startFrom: without(solution, ':error-direction'),
    });
    check(withDirection, 2, 'with the earlier direction');
    check(withoutDirection, 2, 'without it');
    expect(withDirection.solves).toBeLessThan(withoutDirection.solves);
  });

  it('a direction from a walk with other probabilities still gives sound bounds', () => {
    const stale = analyzeModel(walk(n, 0.3, n / 2, 1), { precision: PRECISION, keepSolution: true }).solution!;
    check(analyzeModel(walk(n, 0.5, n / 2, 1), { precision: PRECISION, startFrom: stale }), 1, 'stale direction');
    const scaled: WarmStart = {
      ...stale,
      values: Object.fromEntries(
        Object.entries(stale.values).map(([name, v]) => [
          name,
          name.endsWith(':error-direction') ? v.map((x) => x / 1e6) : v,
        ]),
      ),
    };
    check(
      analyzeModel(walk(n, 0.5, n / 2, 1), { precision: PRECISION, startFrom: scaled }),
      1,
      'direction far too short',
    );
  });
});
