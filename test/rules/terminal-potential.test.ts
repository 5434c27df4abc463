/**
 * terminal-potential: cases that must fire and cases that must not (scenarios of our own, invented numbers).
 */
import { describe, expect, it } from 'vitest';
import { applyFix, checkSpec, findingsOf, spanText, type SpecObject } from '../helpers/specs';

/** A parking robot: approach the bay and park (goal), or scrape the wall (failure); shaped by distance. */
function parking(potential: Record<string, number>): SpecObject {
  return {
    name: 'parking',
    discount: 0.9,
    start: 'lane',
    actions: ['forward', 'turn'],
    states: { lane: {}, bay: { terminal: 'goal' }, wall: { terminal: 'failure' } },
    shaping: { potential },
    transitions: [
      { from: 'lane', action: 'forward', to: 'bay', reward: 5 },
      { from: 'lane', action: 'turn', to: 'wall', reward: -5 },
    ],
  };
}

describe('terminal-potential: must fire', () => {
  const cases: Array<[string, Record<string, number>, string, string]> = [
    ['a potential on the goal', { lane: 1, bay: 3 }, 'bay', '+2.7'],
    ['a negative potential on the failure', { lane: 1, wall: -2 }, 'wall', '-1.8'],
  ];
  it.each(cases)('%s', (_name, potential, state, gain) => {
    const report = checkSpec(parking(potential));
    const found = findingsOf(report, 'terminal-potential');
    expect(found).toHaveLength(1);
    expect(spanText(report, found[0])).toBe(`"${state}"`);
    // discount * Phi is what entering the terminal gains from the shaping.
    expect(found[0].message).toContain(gain);
    expect(found[0].related?.[0].message).toContain('declared terminal');
  });

  it('its quick fix sets the potential to 0, after which the rule is quiet', () => {
    const report = checkSpec(parking({ lane: 1, bay: 3 }));
    const [finding] = findingsOf(report, 'terminal-potential');
    expect(finding.fixes).toHaveLength(1);
    const fixed = applyFix(report, finding.fixes![0].edits);
    expect(fixed).toContain('"bay": 0');
    expect(findingsOf(checkSpec(fixed), 'terminal-potential')).toEqual([]);
  });
});

describe('terminal-potential: must not fire', () => {
  const cases: Array<[string, Record<string, number>]> = [
    ['potentials only on non-terminal states', { lane: 4 }],
    ['an explicit 0 on a terminal', { lane: 4, bay: 0, wall: 0 }],
  ];
  it.each(cases)('%s', (_name, potential) => {
    expect(findingsOf(checkSpec(parking(potential)), 'terminal-potential')).toEqual([]);
  });
});
