/**
 * The classic fixtures are the books' MDPs: their values, as Episcope computes them, match the values the
 * books print, at the printed precision. (This checks the fixtures that the no-false-alarm test relies on.)
 */
import { readFileSync } from 'node:fs';
import * as path from 'node:path';
import { describe, expect, it } from 'vitest';
import type { Bounds } from '../../server/src/analysis/types';
import { checkSpec } from '../helpers/specs';

const FOLDER = path.resolve(__dirname, '..', 'fixtures', 'classic');

function analysed(file: string) {
  const report = checkSpec(readFileSync(path.join(FOLDER, file), 'utf8'));
  expect(report.analysis, file).toBeDefined();
  return report.analysis!;
}

/** The bounds of `state` contain `printed` rounded to `decimals` places (the interval overlaps its rounding cell). */
function expectPrinted(bounds: Bounds, state: number, printed: number, decimals: number): void {
  const half = 0.5 * 10 ** -decimals;
  expect(bounds.upper[state]).toBeGreaterThanOrEqual(printed - half);
  expect(bounds.lower[state]).toBeLessThanOrEqual(printed + half);
}

describe('the classic fixtures reproduce the published values', () => {
  it('Sutton and Barto 2nd ed., Example 3.5 / Figure 3.2 (random policy) and Example 3.8 / Figure 3.5 (optimal)', () => {
    const a = analysed('sutton-barto-3.5-gridworld.mdp.json');
    const at = (id: string) => a.model.stateIndex.get(id)!;
    // Figure 3.2: A (row 0, column 1) 8.8, B (row 0, column 3) 5.3, bottom-left corner -1.9.
    expectPrinted(a.random.values, at('r0c1'), 8.8, 1);
    expectPrinted(a.random.values, at('r0c3'), 5.3, 1);
    expectPrinted(a.random.values, at('r4c0'), -1.9, 1);
    // Figure 3.5: top row 22.0 24.4 22.0 19.4 17.5.
    [22.0, 24.4, 22.0, 19.4, 17.5].forEach((v, c) => expectPrinted(a.optimal.values, at(`r0c${c}`), v, 1));
  });

  it('Sutton and Barto 2nd ed., Example 4.1 / Figure 4.1: the random policy values -14, -20, -22', () => {
    const a = analysed('sutton-barto-4.1-gridworld.mdp.json');
    const at = (id: string) => a.model.stateIndex.get(id)!;
    expectPrinted(a.random.values, at('s1'), -14, 0);
    expectPrinted(a.random.values, at('s2'), -20, 0);
    expectPrinted(a.random.values, at('s3'), -22, 0);
    expectPrinted(a.random.values, at('s6'), -20, 0);
  });

  it("Sutton and Barto 2nd ed., Example 4.3: with p_h = 0.4 the gambler's best win probability from 50 is 0.4", () => {
    const a = analysed('sutton-barto-4.3-gambler.mdp.json');
    expectPrinted(a.optimal.values, a.model.stateIndex.get('c50')!, 0.4, 6);
    expectPrinted(a.optimal.values, a.model.stateIndex.get('c25')!, 0.16, 6);
  });

  it('Sutton and Barto 2nd ed., Example 6.2: the random walk values are 1/6 .. 5/6', () => {
    const a = analysed('sutton-barto-6.2-random-walk.mdp.json');
    ['A', 'B', 'C', 'D', 'E'].forEach((id, i) =>
      expectPrinted(a.optimal.values, a.model.stateIndex.get(id)!, (i + 1) / 6, 6),
    );
  });

  it('Sutton and Barto 2nd ed., Examples 6.5 and 6.6: the shortest episodes take 15 (windy) and 13 (cliff) steps', () => {
    const windy = analysed('sutton-barto-6.5-windy-gridworld.mdp.json');
    expectPrinted(windy.optimal.values, windy.model.stateIndex.get('r3c0')!, -15, 6);
    const cliff = analysed('sutton-barto-6.6-cliff-walking.mdp.json');
    expectPrinted(cliff.optimal.values, cliff.model.stateIndex.get('r3c0')!, -13, 6);
  });

  it('Russell and Norvig 3rd ed., Figure 17.3: U(1,1) = 0.705, which includes R(1,1) = -0.04', () => {
    const a = analysed('russell-norvig-17.1-4x3-world.mdp.json');
    // The fixture pays R(s') on entering s', so its value is U(s) - R(s).
    expectPrinted(a.optimal.values, a.model.stateIndex.get('x1y1')!, 0.705 + 0.04, 3);
    expectPrinted(a.optimal.values, a.model.stateIndex.get('x3y1')!, 0.611 + 0.04, 3);
  });
});
