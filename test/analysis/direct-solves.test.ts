/**
 * The direct solves (sparse linear systems per SCC, policy iteration) against closed forms, and the
 * rule that a figure the solver could not pin down is never printed as a number.
 *
 * Gambler's ruin on 0..N, a step up with probability p, down with q = 1 - p: from i the walk ends
 * at N with probability i/N (p = 1/2) or (1 - r^i)/(1 - r^N), r = q/p, and its expected duration is
 * i(N - i) (p = 1/2) or i/(q - p) - N/(q - p) (1 - r^i)/(1 - r^N) (W. Feller, An Introduction to
 * Probability Theory and Its Applications, vol. 1, 3rd ed., 1968, ch. XIV, sections 2 and 3).
 */
import Ajv2020 from 'ajv/dist/2020';
import { describe, expect, it } from 'vitest';
import outputSchema from '../../schemas/cli-output.schema.json';
import { analyzeModel } from '../../server/src/analysis/index';
import { analysisToJson } from '../../server/src/cli/json-output';
import { textProbability } from '../../server/src/cli/numbers';
import { gamblersRuinWalk as walk, ruin } from '../helpers/gamblers-ruin';

describe("gambler's ruin at N = 1000 (Feller, vol. 1, 3rd ed., ch. XIV)", () => {
  for (const p of [0.5, 0.49]) {
    for (const i of [1, 500, 999]) {
      it(`p = ${p}, from ${i}: value, reach and expected length inside sound, tight bounds`, () => {
        const model = walk(1000, p, i);
        const analysis = analyzeModel(model, { precision: 1e-6 });
        const truth = ruin(1000, p, i);
        const { optimal, random, worst } = analysis.start;
        for (const interval of [optimal, random, worst]) {
          expect(interval.lower).toBeLessThanOrEqual(truth.goal);
          expect(interval.upper).toBeGreaterThanOrEqual(truth.goal);
          expect(interval.upper - interval.lower).toBeLessThanOrEqual(1e-6);
        }
        expect(Math.abs(analysis.start.reach.random.goal - truth.goal)).toBeLessThanOrEqual(1e-6);
        expect(Math.abs(analysis.start.reach.random.failure - (1 - truth.goal))).toBeLessThanOrEqual(1e-6);
        expect(Math.abs(analysis.start.maxGoalReach - truth.goal)).toBeLessThanOrEqual(1e-6);
        // Lengths: precision relative above 1000 (1e-6 * |value| / 1000), absolute below.
        const tolerance = 1e-6 * Math.max(1, truth.duration / 1000);
        expect(Math.abs(analysis.start.expectedLength.random - truth.duration)).toBeLessThanOrEqual(tolerance);
        expect(analysis.precision).toBeLessThanOrEqual(1e-6);
        // One action: the best, worst and random problems are one system, solved directly.
        expect(analysis.solves).toBeGreaterThan(0);
        expect(analysis.iterations).toBe(0);
      });
    }
  }
});

describe('a solve stopped by its work cap', () => {
  it('prints no point figure it could not determine, and precision says how wide the bounds stayed', () => {
    // The fair walk on 0..200 needs about N^2 = 40,000 sweeps; three are allowed here and the
    // direct solves are off, so the reach and length figures stay wide.
    const model = walk(200, 0.5, 100);
    const analysis = analyzeModel(model, { precision: 1e-6, maxSweeps: 3, directSolves: false });
    expect(Number.isNaN(analysis.start.expectedLength.random)).toBe(true);
    expect(Number.isNaN(analysis.start.reach.random.goal)).toBe(true);
    expect(analysis.precision).toBeGreaterThan(1e-6);
    // JSON says "undetermined" (the contract's schema allows it) rather than a number it does not know.
    const json = analysisToJson(analysis, model, true);
    expect(json.start.reach.random.goal).toBe('undetermined');
    expect(json.start.expectedLength.random).toBe('undetermined');
    expect(textProbability(json.start.reach.random.goal)).toBe('undetermined');
    const validate = new Ajv2020({ allErrors: true, strict: false }).compile(outputSchema);
    expect(
      validate({ version: 1, files: [{ path: 'walk.mdp.json', findings: [], analysis: json }] }),
      JSON.stringify(validate.errors),
    ).toBe(true);
    // The same walk with the direct solves gives the closed forms.
    const direct = analyzeModel(model, { precision: 1e-6 });
    expect(direct.start.reach.random.goal).toBeCloseTo(0.5, 9);
    expect(Math.abs(direct.start.expectedLength.random - 10_000)).toBeLessThanOrEqual(1e-5);
  });
});
