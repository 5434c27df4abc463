/**
 * unreachable-state: cases that must fire and cases that must not (scenarios of our own,
 * invented numbers). Reachability is checked by hand on each small graph.
 */
import { expect } from 'vitest';
import { testRule } from '../helpers/rule-tester';
import { chainSpec, findingsOf, type SpecObject } from '../helpers/specs';

/** A warehouse picker of our own: aisle -> shelf -> packed (goal), plus extra states per case. */
function picker(
  extraStates: Record<string, object>,
  extraTransitions: object[],
  overrides: SpecObject = {},
): SpecObject {
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

/** The picker with 600 bins that nothing leads to. */
function manyBins(): SpecObject {
  const extra: Record<string, object> = {};
  const transitions: object[] = [];
  for (let i = 0; i < 600; i++) {
    extra[`bin${i}`] = {};
    transitions.push({ from: `bin${i}`, action: 'walk', to: 'packed', reward: 0 });
  }
  return picker(extra, transitions);
}

testRule('unreachable-state', {
  invalid: [
    {
      name: 'a state nothing leads to, with its transition',
      spec: picker({ annex: {} }, [{ from: 'annex', action: 'walk', to: 'packed', reward: 3 }]),
      findings: [
        {
          at: '"annex"',
          severity: 'info',
          says: ["'annex' is never reached", 'its transition never runs and its rewards never count toward any return'],
          tags: ['unnecessary'],
          related: 1,
        },
      ],
    },
    {
      name: 'a chain of states reached only from each other',
      // annex -> loft -> annex: neither is entered from the aisle.
      spec: picker({ annex: {}, loft: {} }, [
        { from: 'annex', action: 'walk', to: 'loft', reward: 0 },
        { from: 'loft', action: 'walk', to: 'annex', reward: 0 },
      ]),
      findings: [{ at: '"annex"' }, { at: '"loft"' }],
    },
    {
      name: 'a state that only an outcome of probability 0 leads to',
      spec: picker({ annex: {} }, [{ from: 'annex', action: 'walk', to: 'packed', reward: 0 }], {
        transitions: [
          { from: 'aisle', action: 'walk', to: { shelf: 1, annex: 0 }, reward: -1 },
          { from: 'shelf', action: 'walk', to: 'packed', reward: 10 },
          { from: 'annex', action: 'walk', to: 'packed', reward: 0 },
        ],
      }),
      findings: [{ at: '"annex"' }],
    },
    {
      name: 'many unreachable states: one finding each for the first 499, then one that counts the rest',
      spec: manyBins(),
      findings: 500,
      check: (_report, findings) =>
        expect(findings[499].message).toContain('101 more states are never reached from the start'),
    },
  ],
  valid: [
    { name: 'a spec where every state is on the way', spec: chainSpec() },
    {
      name: 'a state reached only with a small probability',
      spec: picker({ annex: {} }, [{ from: 'annex', action: 'walk', to: 'packed', reward: 0 }], {
        transitions: [
          { from: 'aisle', action: 'walk', to: { shelf: 0.99, annex: 0.01 }, reward: -1 },
          { from: 'shelf', action: 'walk', to: 'packed', reward: 10 },
          { from: 'annex', action: 'walk', to: 'packed', reward: 0 },
        ],
      }),
    },
    {
      name: 'a state that is a start state of its own',
      spec: picker({ annex: {} }, [{ from: 'annex', action: 'walk', to: 'packed', reward: 0 }], {
        start: ['aisle', 'annex'],
      }),
    },
    {
      name: 'an unreachable terminal (unreachable-terminal reports those)',
      spec: picker({ lost: { terminal: 'failure' } }, []),
      check: (report) => expect(findingsOf(report, 'unreachable-terminal')).toHaveLength(1),
    },
  ],
});
