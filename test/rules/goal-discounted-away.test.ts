/**
 * goal-discounted-away: cases that must fire and cases that must not (scenarios of our own, invented numbers).
 */
import { testRule } from '../helpers/rule-tester';
import type { SpecObject } from '../helpers/specs';

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

testRule('goal-discounted-away', {
  valid: [
    { name: 'a goal 30 steps away at discount 0.9 (0.9^29 = 0.047)', spec: corridor(30, 0.9), analysed: true },
    { name: 'discount 1 never discounts the goal away', spec: corridor(500, 1), analysed: true },
    { name: 'a goal without a reward on entry has no size to lose', spec: corridor(80, 0.9, 0, -1), analysed: true },
    {
      name: 'a smaller configured share',
      spec: corridor(80, 0.9),
      config: { thresholds: { 'goal-discounted-away.share': 1e-5 } },
      analysed: true,
    },
  ],
  invalid: [
    {
      name: 'a goal 80 steps away at discount 0.9 keeps 0.9^79 = 2.4e-4 of its reward',
      spec: corridor(80, 0.9),
      // The finding sits on the discount and gives the distance, the surviving share and the effective horizon.
      findings: [
        {
          at: '0.9',
          says: ['80 steps', (0.9 ** 79).toExponential(2).replace('e+', 'e'), '1/(1-0.9) = 10.0 steps'],
          trace: 81,
        },
      ],
    },
    {
      name: 'under minimize, a goal that pays (a negative cost) counts the same way',
      spec: { ...corridor(80, 0.9, -100, 1), objective: 'minimize' },
      findings: 1,
    },
  ],
});
