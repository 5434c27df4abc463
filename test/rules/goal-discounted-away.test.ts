/**
 * goal-discounted-away: cases that must fire and cases that must not (scenarios of our own, invented numbers).
 */
import { describe, expect, it } from 'vitest';
import { checkSpec, findingsOf, spanText, type SpecObject } from '../helpers/specs';

/** A relay rover driving a corridor of `length` segments to a base station that pays `bonus` on arrival. */
function corridor(length: number, discount: number, bonus = 100, step = 0): SpecObject {
  const states: Record<string, object> = { base: { terminal: 'goal' } };
  const transitions: object[] = [];
  for (let i = 0; i < length; i++) {
    states[`km${i}`] = {};
    const next = i + 1 === length ? 'base' : `km${i + 1}`;
    transitions.push({ from: `km${i}`, action: 'drive', to: next, reward: next === 'base' ? bonus : step });
  }
  return { name: 'relay', discount, start: 'km0', actions: ['drive'], states, transitions };
}

describe('goal-discounted-away: must fire', () => {
  it('a goal 80 steps away at discount 0.9 keeps 0.9^79 = 2.4e-4 of its reward', () => {
    const report = checkSpec(corridor(80, 0.9));
    const found = findingsOf(report, 'goal-discounted-away');
    expect(found).toHaveLength(1);
    // The finding sits on the discount and gives the distance, the surviving share and the effective horizon.
    expect(spanText(report, found[0])).toBe('0.9');
    expect(found[0].message).toContain('80 steps');
    expect(found[0].message).toContain(`${(0.9 ** 79).toExponential(2).replace('e+', 'e')}`);
    expect(found[0].message).toContain('1/(1-0.9) = 10.0 steps');
    expect(found[0].trace).toHaveLength(81);
  });

  it('under minimize, a goal that pays (a negative cost) counts the same way', () => {
    expect(findingsOf(checkSpec({ ...corridor(80, 0.9, -100, 1), objective: 'minimize' }), 'goal-discounted-away')).toHaveLength(1);
  });
});

describe('goal-discounted-away: must not fire', () => {
  const cases: Array<[string, SpecObject, object?]> = [
    ['a goal 30 steps away at discount 0.9 (0.9^29 = 0.047)', corridor(30, 0.9)],
    ['discount 1 never discounts the goal away', corridor(500, 1)],
    ['a goal without a reward on entry has no size to lose', corridor(80, 0.9, 0, -1)],
    ['a smaller configured share', corridor(80, 0.9), { thresholds: { 'goal-discounted-away.share': 1e-5 } }],
  ];
  it.each(cases)('%s', (_name, spec, config) => {
    const report = checkSpec(spec, config);
    expect(report.notAnalysed).toBeUndefined();
    expect(findingsOf(report, 'goal-discounted-away')).toEqual([]);
  });
});
