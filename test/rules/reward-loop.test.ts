/**
 * reward-loop: cases that must fire and cases that must not (scenarios of our own, invented numbers).
 */
import { testRule } from '../helpers/rule-tester';
import type { SpecObject } from '../helpers/specs';

/**
 * A museum guide robot: from the hallway it can visit the charging pad (paying `pad` each way) or
 * take visitors to the exit (paying `exit`).
 */
function museum(discount: number, pad: number, exit: number, overrides: SpecObject = {}): SpecObject {
  return {
    name: 'museum',
    discount,
    start: 'hallway',
    actions: ['to-pad', 'to-hallway', 'to-exit'],
    states: {
      hallway: { actions: ['to-pad', 'to-exit'] },
      pad: { actions: ['to-hallway'] },
      exit: { terminal: 'goal' },
    },
    transitions: [
      { from: 'hallway', action: 'to-pad', to: 'pad', reward: pad },
      { from: 'pad', action: 'to-hallway', to: 'hallway', reward: pad },
      { from: 'hallway', action: 'to-exit', to: 'exit', reward: exit },
    ],
    ...overrides,
  };
}

const partlyEntered = museum(0.9, 2, 7, {
  start: { hallway: 0.1, lobby: 0.9 },
  states: {
    lobby: { actions: ['to-exit'] },
    hallway: { actions: ['to-pad', 'to-exit'] },
    pad: { actions: ['to-hallway'] },
    exit: { terminal: 'goal' },
  },
  transitions: [
    { from: 'lobby', action: 'to-exit', to: 'exit', reward: 7 },
    { from: 'hallway', action: 'to-pad', to: 'pad', reward: 2 },
    { from: 'pad', action: 'to-hallway', to: 'hallway', reward: 2 },
    { from: 'hallway', action: 'to-exit', to: 'exit', reward: 7 },
  ],
});

testRule('reward-loop', {
  valid: [
    { name: 'the exit pays more than the loop ever can', spec: museum(0.9, 0.5, 7), analysed: true },
    { name: 'the loop costs', spec: museum(0.9, -1, 7), analysed: true },
    { name: 'discount 1 makes the loop infinite: unbounded-return reports it', spec: museum(1, 2, 7), analysed: true },
    { name: 'a loop entered by a tenth of the start distribution, with the default gap', spec: partlyEntered },
  ],
  invalid: [
    {
      // The loop pays 2 per step: 2/(1-0.9) = 20 from the hallway, against 7 for the exit.
      name: 'a bonus for each visit of the pad beats taking visitors out',
      spec: museum(0.9, 2, 7),
      findings: [
        {
          says: [
            'hallway -> pad -> hallway',
            '+4.0 per lap',
            'ends with probability 0%',
            'reached with 100%',
            'earns 20.0 from the start',
            'route to a goal earns 7.0',
          ],
          trace: ['hallway', 'pad', 'hallway'],
          related: ['"pad"', '"hallway"'],
        },
      ],
    },
    {
      name: 'a loop entered by part of the start distribution, with a lower configured gap',
      spec: partlyEntered,
      config: { thresholds: { 'reward-loop.probabilityGap': 0.05 } },
      findings: 1,
    },
  ],
});
