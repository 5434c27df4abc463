/**
 * trap-state: cases that must fire and cases that must not (scenarios of our own, invented
 * numbers). Each trap is checked by hand: no action leaves it and no terminal is reachable.
 */
import { testRule } from '../helpers/rule-tester';
import { chainSpec, type SpecObject } from '../helpers/specs';

/**
 * A cliff walk of our own: from the ledge the agent can walk home (goal) or jump into the pit,
 * where it can only climb in place for `climb` per step.
 */
function cliff(discount: number, climb: number, overrides: SpecObject = {}): SpecObject {
  return {
    name: 'cliff',
    discount,
    start: 'ledge',
    actions: ['walk', 'jump', 'climb'],
    states: { ledge: { actions: ['walk', 'jump'] }, pit: { actions: ['climb'] }, home: { terminal: 'goal' } },
    transitions: [
      { from: 'ledge', action: 'walk', to: 'home', reward: 5 },
      { from: 'ledge', action: 'jump', to: 'pit', reward: 0 },
      { from: 'pit', action: 'climb', to: 'pit', reward: climb },
    ],
    ...overrides,
  };
}

testRule('trap-state', {
  invalid: [
    {
      name: 'discount 1, no horizon: an error, with the value inside and the route from the start',
      spec: cliff(1, -1),
      findings: [
        {
          at: '"pit"',
          severity: 'error',
          says: [
            "trap: once in 'pit', no action leads out and no terminal can be reached",
            'each step inside pays -1.0',
            "V* at 'pit' is -infinity",
            // The random policy jumps with probability 1/2 at the ledge.
            'never ends an episode with probability 50%',
          ],
          steps: [
            ['ledge', 'jump'],
            ['pit', undefined],
          ],
        },
      ],
    },
    {
      name: 'with a discount: a warning, and V* inside is the geometric sum -1 / (1 - 0.9) = -10',
      spec: cliff(0.9, -1),
      findings: [{ severity: 'warning', says: ["V* at 'pit' is -10.0"] }],
    },
    {
      name: 'with a horizon at discount 1: a warning, since the episode is cut',
      spec: cliff(1, -1, { horizon: 20 }),
      findings: [{ severity: 'warning', says: ['before the time limit'] }],
    },
    {
      name: 'a region of several states reports once, naming the others',
      spec: cliff(1, 0, {
        actions: ['walk', 'jump', 'climb', 'slide'],
        states: {
          ledge: { actions: ['walk', 'jump'] },
          pit: { actions: ['climb'] },
          cave: { actions: ['slide'] },
          home: { terminal: 'goal' },
        },
        transitions: [
          { from: 'ledge', action: 'walk', to: 'home', reward: 5 },
          { from: 'ledge', action: 'jump', to: 'pit', reward: 0 },
          { from: 'pit', action: 'climb', to: 'cave', reward: 0 },
          { from: 'cave', action: 'slide', to: 'pit', reward: 0 },
        ],
      }),
      findings: [{ says: ["once in 'pit' (with 'cave')", 'nothing is earned or lost in there'], related: ['"cave"'] }],
    },
    {
      name: 'the start itself is trapped when its only way leads nowhere',
      spec: cliff(0.9, -1, { start: 'pit' }),
      findings: [{ at: '"pit"' }],
    },
  ],
  valid: [
    {
      name: 'no trap: every state can still reach a terminal',
      spec: cliff(1, -1, {
        transitions: [
          { from: 'ledge', action: 'walk', to: 'home', reward: 5 },
          { from: 'ledge', action: 'jump', to: 'pit', reward: 0 },
          { from: 'pit', action: 'climb', to: { pit: 0.9, ledge: 0.1 }, reward: -1 },
        ],
      }),
    },
    {
      name: 'a continuing task (no terminals declared) is never episodic',
      spec: {
        name: 'thermostat',
        discount: 0.9,
        start: 'cool',
        actions: ['heat', 'rest'],
        states: { cool: {}, warm: {} },
        transitions: [
          { from: 'cool', action: 'heat', to: 'warm', reward: -1 },
          { from: 'cool', action: 'rest', to: 'cool', reward: 0 },
          { from: 'warm', action: ['heat', 'rest'], to: 'cool', reward: 2 },
        ],
      },
    },
    {
      name: 'a closed region that no policy can reach from the start',
      spec: cliff(1, -1, {
        transitions: [
          { from: 'ledge', action: 'walk', to: 'home', reward: 5 },
          { from: 'ledge', action: 'jump', to: 'home', reward: 0 },
          { from: 'pit', action: 'climb', to: 'pit', reward: -1 },
        ],
      }),
    },
    { name: 'the base chain spec', spec: chainSpec() },
  ],
});
