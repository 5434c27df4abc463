/**
 * The benchmark's spec generators (scripts/bench/generators.ts): small instances load, compile and
 * pass every rule without an error finding, the grid moves as described, and the walks agree with
 * gambler's ruin in closed form (W. Feller, An Introduction to Probability Theory and Its
 * Applications, vol. 1, 3rd ed., ch. XIV).
 */
import { describe, expect, test } from 'vitest';
import {
  gridCell,
  gridPits,
  randomTypeScriptSpec,
  randomWalkSpec,
  slipperyGridSpec,
  walkState,
  walkTruth,
} from '../../scripts/bench/generators';
import { checkSpec } from '../helpers/specs';
import { analyzeTs } from '../typescript/ts-specs';
import type { FileReport } from '../../server/src/analyze';

const errors = (report: FileReport) =>
  report.findings.filter((f) => f.severity === 'error').map((f) => `${f.rule}: ${f.message}`);

describe('slippery grid', () => {
  test.each([0.9, 0.99, 0.999, 1])('a 12x12 grid at discount %s compiles and has no error finding', (discount) => {
    const report = checkSpec(slipperyGridSpec({ size: 12, discount }));
    expect(report.model, report.notAnalysed).toBeDefined();
    expect(errors(report)).toEqual([]);
    expect(report.model!.stateCount).toBe(144);
    // One goal and the pits are terminal; every other cell offers the four moves.
    expect(report.model!.choiceCount).toBe(4 * (144 - 1 - gridPits(12).length));
  });

  test('moves as intended with 0.8 and sideways with 0.1 each; walls bounce; every step costs 1', () => {
    const spec = slipperyGridSpec({ size: 6, discount: 0.9 }) as {
      transitions: Array<{
        from: string;
        action: string;
        to: Array<{ state: string; probability: number; reward: number }>;
      }>;
    };
    const outcomes = (from: string, action: string) => {
      const t = spec.transitions.find((x) => x.from === from && x.action === action)!;
      return Object.fromEntries(t.to.map((o) => [o.state, o.probability]));
    };
    // North from the top-left corner: north and west hit walls (0.8 + 0.1 stay), east slips to the right.
    const corner = outcomes(gridCell(0, 0), 'north');
    expect(corner[gridCell(0, 0)]).toBeCloseTo(0.9, 12);
    expect(corner[gridCell(0, 1)]).toBeCloseTo(0.1, 12);
    // South from an inner cell: 0.8 down, 0.1 to each side.
    const inner = outcomes(gridCell(2, 1), 'south');
    expect(inner).toEqual({
      [gridCell(3, 1)]: 0.8,
      [gridCell(2, 2)]: expect.closeTo(0.1, 12),
      [gridCell(2, 0)]: expect.closeTo(0.1, 12),
    });
    expect(spec.transitions.every((t) => t.to.every((o) => o.reward === -1))).toBe(true);
    for (const t of spec.transitions) expect(t.to.reduce((sum, o) => sum + o.probability, 0)).toBeCloseTo(1, 12);
  });
});

describe("random walk (gambler's ruin)", () => {
  test('the closed forms agree with the formulas written out directly at a size where no power overflows', () => {
    // Feller ch. XIV: fair P = i/N and duration i(N - i); biased, r = q/p: P = (1 - r^i)/(1 - r^N),
    // duration i/(q - p) - (N/(q - p)) P.
    expect(walkTruth(20, 0.5, 5)).toEqual({ goal: 0.25, failure: 0.75, duration: 75 });
    const r = 0.51 / 0.49;
    const goal = (1 - r ** 7) / (1 - r ** 20);
    const biased = walkTruth(20, 0.49, 7);
    expect(biased.goal).toBeCloseTo(goal, 14);
    expect(biased.duration).toBeCloseTo(7 / 0.02 - (20 / 0.02) * goal, 9);
    // Up more likely than down: r < 1 takes the other branch of the overflow-free form.
    const up = walkTruth(20, 0.6, 7);
    expect(up.goal).toBeCloseTo((1 - (0.4 / 0.6) ** 7) / (1 - (0.4 / 0.6) ** 20), 14);
    // Large N stays finite: 0.49-biased from the middle of 0..10000 almost never reaches the top.
    const far = walkTruth(10_000, 0.49, 5000);
    expect(far.goal).toBeGreaterThan(0);
    expect(far.goal).toBeLessThan(1e-80);
    expect(far.duration).toBeCloseTo(5000 / 0.02, 6);
  });

  test.each([
    [0.5, 10],
    [0.49, 7],
  ])(
    'a walk on 0..20 with up %s from %s has no error finding, and its value, reach and length match the closed form',
    (up, start) => {
      const report = checkSpec(randomWalkSpec({ n: 20, up, start }));
      expect(errors(report)).toEqual([]);
      const truth = walkTruth(20, up, start);
      const summary = report.analysis!.start;
      // Reaching 20 pays 1 and nothing else pays, so the value is the probability of reaching 20.
      expect(summary.optimal.lower).toBeLessThanOrEqual(truth.goal + 1e-9);
      expect(summary.optimal.upper).toBeGreaterThanOrEqual(truth.goal - 1e-9);
      expect(summary.reach.random.goal).toBeCloseTo(truth.goal, 5);
      expect(summary.reach.random.failure).toBeCloseTo(truth.failure, 5);
      expect(summary.expectedLength.random).toBeCloseTo(truth.duration, 3);
      expect(report.model!.stateIds).toContain(walkState(20));
    },
  );
});

describe('random TypeScript model', () => {
  test('a 400-state instance enumerates every state, 4 actions x 8 outcomes each, with no error finding', async () => {
    const report = await analyzeTs(
      randomTypeScriptSpec({ states: 400, actions: 4, outcomes: 8, seed: 5, discount: 0.95 }),
    );
    expect(errors(report)).toEqual([]);
    const model = report.model!;
    expect(model).toBeDefined();
    // Start 0 reaches nearly everything; terminals (s % 100 of 98 and 99) offer nothing.
    expect(model.stateCount).toBeGreaterThan(350);
    for (let s = 0; s < model.stateCount; s++) {
      const choices = model.choiceStart[s + 1] - model.choiceStart[s];
      expect(choices).toBe(model.terminal[s] === 0 ? 4 : 0);
    }
    expect(model.outcomeCount).toBe(8 * model.choiceCount);
  });
});
