/**
 * living-reward: cases that must fire and cases that must not (scenarios of our own, invented numbers).
 */
import { describe, expect, it } from 'vitest';
import { checkSpec, findingsOf, type SpecObject } from '../helpers/specs';

/** A patrol drone circling yard <-> roof (paying `alive` per step) that should land on the pad (`land`). */
function patrol(discount: number, alive: [number, number], land: number, horizon?: number): SpecObject {
  return {
    name: 'patrol',
    discount,
    ...(horizon !== undefined ? { horizon } : {}),
    start: 'yard',
    actions: ['circle', 'land'],
    states: { yard: {}, roof: { actions: ['circle'] }, pad: { terminal: 'goal' } },
    transitions: [
      { from: 'yard', action: 'circle', to: 'roof', reward: alive[0] },
      { from: 'roof', action: 'circle', to: 'yard', reward: alive[1] },
      { from: 'yard', action: 'land', to: 'pad', reward: land },
    ],
  };
}

describe('living-reward: must fire', () => {
  it('an alive bonus of 1 per step at discount 0.95 is worth 20, more than landing (10)', () => {
    const found = findingsOf(checkSpec(patrol(0.95, [1, 1], 10)), 'living-reward');
    expect(found).toHaveLength(1);
    const message = found[0].message;
    expect(message).toContain('yard -> roof -> yard');
    expect(message).toContain('at least +1.0');
    expect(message).toContain('worth at least 20.0');
    expect(message).toContain('from there (10.0)');
  });

  it('with a horizon the alive bonus counts only up to the time limit', () => {
    // 1 per step for 30 steps at discount 1 is 30, more than landing (10).
    const found = findingsOf(checkSpec(patrol(1, [1, 1], 10, 30)), 'living-reward');
    expect(found).toHaveLength(1);
    expect(found[0].message).toContain('worth at least 30.0');
  });
});

describe('living-reward: must not fire', () => {
  const cases: Array<[string, SpecObject]> = [
    ['a small alive bonus that the goal outweighs (0.1/(1-0.9) = 1 < 10)', patrol(0.9, [0.1, 0.1], 10)],
    ['not every step of the loop pays', patrol(0.95, [1, 0], 10)],
    ['steps cost', patrol(0.95, [-1, -1], 10)],
    ['a short horizon caps the alive bonus (5 < 10)', patrol(1, [1, 1], 10, 5)],
  ];
  it.each(cases)('%s', (_name, spec) => {
    const report = checkSpec(spec);
    expect(report.notAnalysed).toBeUndefined();
    expect(findingsOf(report, 'living-reward')).toEqual([]);
  });
});
