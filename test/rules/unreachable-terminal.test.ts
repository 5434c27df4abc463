/**
 * unreachable-terminal: cases that must fire and cases that must not (scenarios of our own,
 * invented numbers).
 */
import { testRule } from '../helpers/rule-tester';
import { chainSpec, type SpecObject } from '../helpers/specs';

/** A delivery robot of our own: corridor -> door -> room (goal), a stairwell (failure) per case. */
function courier(transitions: object[], overrides: SpecObject = {}): SpecObject {
  return {
    name: 'courier',
    discount: 0.9,
    start: 'corridor',
    actions: ['move'],
    states: { corridor: {}, door: {}, room: { terminal: 'goal' }, stairwell: { terminal: 'failure' } },
    transitions: [{ from: 'corridor', action: 'move', to: 'door', reward: -1 }, ...transitions],
    ...overrides,
  };
}

testRule('unreachable-terminal', {
  valid: [
    {
      name: 'every terminal is entered on some route',
      spec: courier([{ from: 'door', action: 'move', to: { room: 0.9, stairwell: 0.1 }, reward: 5 }]),
    },
    {
      name: 'a terminal entered only with a tiny probability is still reachable',
      spec: courier([{ from: 'door', action: 'move', to: { room: 0.999, stairwell: 0.001 }, reward: 5 }]),
    },
    { name: 'the base chain spec', spec: chainSpec() },
  ],
  invalid: [
    {
      name: 'a failure terminal that nothing enters: the hazard has no effect',
      spec: courier([{ from: 'door', action: 'move', to: 'room', reward: 20 }]),
      findings: [
        {
          at: '"stairwell"',
          severity: 'warning',
          says: [
            "terminal 'stairwell' (failure) is never reached from the start",
            'no transition leads into it',
            'the hazard it stands for has no effect',
          ],
        },
      ],
    },
    {
      // 'vault' leads to the room, but nothing leads to 'vault'; the door only leads to the stairwell.
      name: 'the only goal, entered only from a state that is itself unreachable, with what entering it pays',
      spec: courier(
        [
          { from: 'door', action: 'move', to: 'stairwell', reward: -50 },
          { from: 'vault', action: 'move', to: 'room', reward: 20 },
        ],
        {
          states: { corridor: {}, door: {}, vault: {}, room: { terminal: 'goal' }, stairwell: { terminal: 'failure' } },
        },
      ),
      findings: [
        {
          says: ["terminal 'room' (goal)", 'the +20.0 for entering it never counts', 'no goal is reachable at all'],
          related: ['"room"'],
        },
      ],
    },
  ],
});
