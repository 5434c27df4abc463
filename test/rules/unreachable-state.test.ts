/**
 * unreachable-state: cases that must fire and cases that must not (scenarios of our own,
 * invented numbers). Reachability is checked by hand on each small graph.
 */
import { describe, expect, it } from 'vitest';
import { chainSpec, checkSpec, findingsOf, spanText, type SpecObject } from '../helpers/specs';

/** A warehouse picker of our own: aisle -> shelf -> packed (goal), plus extra states per case. */
function picker(extraStates: Record<string, object>, extraTransitions: object[], overrides: SpecObject = {}): SpecObject {
  return {
    name: 'picker',
    discount: 0.95,
    start: 'aisle',
    actions: ['walk'],
    states: { aisle: {}, shelf: {}, packed: { terminal: 'goal' }, ...extraStates },
    transitions: [
      { from: 'aisle', action: 'walk', to: 'shelf', reward: -1 },
      { from: 'shelf', action: 'walk', to: 'packed', reward: 10 },
      ...extraTransitions,
    ],
    ...overrides,
  };
}

describe('unreachable-state: must fire', () => {
  it('a state nothing leads to, with its transition', () => {
    const report = checkSpec(picker({ annex: {} }, [{ from: 'annex', action: 'walk', to: 'packed', reward: 3 }]));
    const found = findingsOf(report, 'unreachable-state');
    expect(found).toHaveLength(1);
    expect(found[0].severity).toBe('info');
    expect(spanText(report, found[0])).toBe('"annex"');
    expect(found[0].message).toContain("'annex' is never reached");
    expect(found[0].message).toContain('its transition never runs and its rewards never count toward any return');
    expect(found[0].tags).toEqual(['unnecessary']);
    expect(found[0].related).toHaveLength(1);
  });

  it('a chain of states reached only from each other', () => {
    // annex -> loft -> annex: neither is entered from the aisle.
    const report = checkSpec(
      picker({ annex: {}, loft: {} }, [
        { from: 'annex', action: 'walk', to: 'loft', reward: 0 },
        { from: 'loft', action: 'walk', to: 'annex', reward: 0 },
      ]),
    );
    expect(findingsOf(report, 'unreachable-state').map((f) => spanText(report, f))).toEqual(['"annex"', '"loft"']);
  });

  it('a state that only an outcome of probability 0 leads to', () => {
    const report = checkSpec(
      picker({ annex: {} }, [{ from: 'annex', action: 'walk', to: 'packed', reward: 0 }], {
        transitions: [
          { from: 'aisle', action: 'walk', to: { shelf: 1, annex: 0 }, reward: -1 },
          { from: 'shelf', action: 'walk', to: 'packed', reward: 10 },
          { from: 'annex', action: 'walk', to: 'packed', reward: 0 },
        ],
      }),
    );
    expect(findingsOf(report, 'unreachable-state').map((f) => spanText(report, f))).toEqual(['"annex"']);
  });

  it('many unreachable states: one finding each for the first 499, then one that counts the rest', () => {
    const extra: Record<string, object> = {};
    const transitions: object[] = [];
    for (let i = 0; i < 600; i++) {
      extra[`bin${i}`] = {};
      transitions.push({ from: `bin${i}`, action: 'walk', to: 'packed', reward: 0 });
    }
    const found = findingsOf(checkSpec(picker(extra, transitions)), 'unreachable-state');
    expect(found).toHaveLength(500);
    expect(found[499].message).toContain('101 more states are never reached from the start');
  });
});

describe('unreachable-state: must not fire', () => {
  it('a spec where every state is on the way', () => {
    expect(findingsOf(checkSpec(chainSpec()), 'unreachable-state')).toEqual([]);
  });

  it('a state reached only with a small probability', () => {
    const report = checkSpec(
      picker({ annex: {} }, [{ from: 'annex', action: 'walk', to: 'packed', reward: 0 }], {
        transitions: [
          { from: 'aisle', action: 'walk', to: { shelf: 0.99, annex: 0.01 }, reward: -1 },
          { from: 'shelf', action: 'walk', to: 'packed', reward: 10 },
          { from: 'annex', action: 'walk', to: 'packed', reward: 0 },
        ],
      }),
    );
    expect(findingsOf(report, 'unreachable-state')).toEqual([]);
  });

  it('a state that is a start state of its own', () => {
    const report = checkSpec(picker({ annex: {} }, [{ from: 'annex', action: 'walk', to: 'packed', reward: 0 }], { start: ['aisle', 'annex'] }));
    expect(findingsOf(report, 'unreachable-state')).toEqual([]);
  });

  it('an unreachable terminal (unreachable-terminal reports those)', () => {
    const report = checkSpec(picker({ lost: { terminal: 'failure' } }, []));
    expect(findingsOf(report, 'unreachable-state')).toEqual([]);
    expect(findingsOf(report, 'unreachable-terminal')).toHaveLength(1);
  });
});
