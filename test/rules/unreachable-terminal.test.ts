/**
 * unreachable-terminal: cases that must fire and cases that must not (scenarios of our own,
 * invented numbers).
 */
import { describe, expect, it } from 'vitest';
import { chainSpec, checkSpec, findingsOf, spanText, type SpecObject } from '../helpers/specs';

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

describe('unreachable-terminal: must fire', () => {
  it('a failure terminal that nothing enters: the hazard has no effect', () => {
    const report = checkSpec(courier([{ from: 'door', action: 'move', to: 'room', reward: 20 }]));
    const found = findingsOf(report, 'unreachable-terminal');
    expect(found).toHaveLength(1);
    expect(found[0].severity).toBe('warning');
    expect(spanText(report, found[0])).toBe('"stairwell"');
    expect(found[0].message).toContain("terminal 'stairwell' (failure) is never reached from the start");
    expect(found[0].message).toContain('no transition leads into it');
    expect(found[0].message).toContain('the hazard it stands for has no effect');
  });

  it('the only goal, entered only from a state that is itself unreachable, with what entering it pays', () => {
    // 'vault' leads to the room, but nothing leads to 'vault'; the door only leads to the stairwell.
    const report = checkSpec(
      courier(
        [
          { from: 'door', action: 'move', to: 'stairwell', reward: -50 },
          { from: 'vault', action: 'move', to: 'room', reward: 20 },
        ],
        { states: { corridor: {}, door: {}, vault: {}, room: { terminal: 'goal' }, stairwell: { terminal: 'failure' } } },
      ),
    );
    const found = findingsOf(report, 'unreachable-terminal');
    expect(found).toHaveLength(1);
    expect(found[0].message).toContain("terminal 'room' (goal)");
    expect(found[0].message).toContain('the +20.0 for entering it never counts');
    expect(found[0].message).toContain('no goal is reachable at all');
    expect(found[0].related?.map((r) => spanText(report, r))).toEqual(['"room"']);
  });
});

describe('unreachable-terminal: must not fire', () => {
  it('every terminal is entered on some route', () => {
    const report = checkSpec(courier([{ from: 'door', action: 'move', to: { room: 0.9, stairwell: 0.1 }, reward: 5 }]));
    expect(findingsOf(report, 'unreachable-terminal')).toEqual([]);
  });

  it('a terminal entered only with a tiny probability is still reachable', () => {
    const report = checkSpec(courier([{ from: 'door', action: 'move', to: { room: 0.999, stairwell: 0.001 }, reward: 5 }]));
    expect(findingsOf(report, 'unreachable-terminal')).toEqual([]);
  });

  it('the base chain spec', () => {
    expect(findingsOf(checkSpec(chainSpec()), 'unreachable-terminal')).toEqual([]);
  });
});
