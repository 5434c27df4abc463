/**
 * trap-state: cases that must fire and cases that must not (scenarios of our own, invented
 * numbers). Each trap is checked by hand: no action leaves it and no terminal is reachable.
 */
import { describe, expect, it } from 'vitest';
import { chainSpec, checkSpec, findingsOf, spanText, type SpecObject } from '../helpers/specs';

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

describe('trap-state: must fire', () => {
  it('discount 1, no horizon: an error, with the value inside and the route from the start', () => {
    const report = checkSpec(cliff(1, -1));
    const found = findingsOf(report, 'trap-state');
    expect(found).toHaveLength(1);
    expect(found[0].severity).toBe('error');
    expect(spanText(report, found[0])).toBe('"pit"');
    const message = found[0].message;
    expect(message).toContain("trap: once in 'pit', no action leads out and no terminal can be reached");
    expect(message).toContain('each step inside pays -1.0');
    expect(message).toContain("V* at 'pit' is -infinity");
    // The random policy jumps with probability 1/2 at the ledge.
    expect(message).toContain('never ends an episode with probability 50%');
    expect(found[0].trace?.map((t) => [t.state, t.action])).toEqual([
      ['ledge', 'jump'],
      ['pit', undefined],
    ]);
  });

  it('with a discount: a warning, and V* inside is the geometric sum -1 / (1 - 0.9) = -10', () => {
    const found = findingsOf(checkSpec(cliff(0.9, -1)), 'trap-state');
    expect(found).toHaveLength(1);
    expect(found[0].severity).toBe('warning');
    expect(found[0].message).toContain("V* at 'pit' is -10.0");
  });

  it('with a horizon at discount 1: a warning, since the episode is cut', () => {
    const found = findingsOf(checkSpec(cliff(1, -1, { horizon: 20 })), 'trap-state');
    expect(found).toHaveLength(1);
    expect(found[0].severity).toBe('warning');
    expect(found[0].message).toContain('before the time limit');
  });

  it('a region of several states reports once, naming the others', () => {
    const spec = cliff(1, 0, {
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
    });
    const report = checkSpec(spec);
    const found = findingsOf(report, 'trap-state');
    expect(found).toHaveLength(1);
    expect(found[0].message).toContain("once in 'pit' (with 'cave')");
    expect(found[0].message).toContain('nothing is earned or lost in there');
    expect(found[0].related?.map((r) => spanText(report, r))).toEqual(['"cave"']);
  });

  it('the start itself is trapped when its only way leads nowhere', () => {
    const spec = cliff(0.9, -1, { start: 'pit' });
    const report = checkSpec(spec);
    const found = findingsOf(report, 'trap-state');
    expect(found).toHaveLength(1);
    expect(spanText(report, found[0])).toBe('"pit"');
  });
});

describe('trap-state: must not fire', () => {
  it('no trap: every state can still reach a terminal', () => {
    const spec = cliff(1, -1, {
      transitions: [
        { from: 'ledge', action: 'walk', to: 'home', reward: 5 },
        { from: 'ledge', action: 'jump', to: 'pit', reward: 0 },
        { from: 'pit', action: 'climb', to: { pit: 0.9, ledge: 0.1 }, reward: -1 },
      ],
    });
    expect(findingsOf(checkSpec(spec), 'trap-state')).toEqual([]);
  });

  it('a continuing task (no terminals declared) is never episodic', () => {
    const spec = {
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
    };
    expect(findingsOf(checkSpec(spec), 'trap-state')).toEqual([]);
  });

  it('a closed region that no policy can reach from the start', () => {
    const spec = cliff(1, -1, {
      transitions: [
        { from: 'ledge', action: 'walk', to: 'home', reward: 5 },
        { from: 'ledge', action: 'jump', to: 'home', reward: 0 },
        { from: 'pit', action: 'climb', to: 'pit', reward: -1 },
      ],
    });
    expect(findingsOf(checkSpec(spec), 'trap-state')).toEqual([]);
  });

  it('the base chain spec', () => {
    expect(findingsOf(checkSpec(chainSpec()), 'trap-state')).toEqual([]);
  });
});
