/**
 * living-reward: cases that must fire and cases that must not (scenarios of our own, invented numbers).
 */
import { testRule } from '../helpers/rule-tester';
import type { SpecObject } from '../helpers/specs';

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

testRule('living-reward', {
  valid: [
    {
      name: 'a small alive bonus that the goal outweighs (0.1/(1-0.9) = 1 < 10)',
      spec: patrol(0.9, [0.1, 0.1], 10),
      analysed: true,
    },
    { name: 'not every step of the loop pays', spec: patrol(0.95, [1, 0], 10), analysed: true },
    { name: 'steps cost', spec: patrol(0.95, [-1, -1], 10), analysed: true },
    { name: 'a short horizon caps the alive bonus (5 < 10)', spec: patrol(1, [1, 1], 10, 5), analysed: true },
  ],
  invalid: [
    {
      name: 'an alive bonus of 1 per step at discount 0.95 is worth 20, more than landing (10)',
      spec: patrol(0.95, [1, 1], 10),
      findings: [{ says: ['yard -> roof -> yard', 'at least +1.0', 'worth at least 20.0', 'from there (10.0)'] }],
    },
    {
      // 1 per step for 30 steps at discount 1 is 30, more than landing (10).
      name: 'with a horizon the alive bonus counts only up to the time limit',
      spec: patrol(1, [1, 1], 10, 30),
      findings: [{ says: ['worth at least 30.0'] }],
    },
  ],
});
