/**
 * Grzes (2017), "Reward shaping in episodic reinforcement learning" (AAMAS): in episodic tasks the
 * policy invariance of potential-based shaping needs Phi = 0 on terminal states; a non-zero potential on a
 * terminal can change the optimal policy. The case below is of our own: a rescue drone that should deliver
 * a kit to the shelter (goal) rather than turn back to base (neutral). Entering base from the field with
 * Phi(base) != 0 gains discount * Phi(base) that no later step takes back.
 */
import { describe, expect, it } from 'vitest';
import { applyFix, checkSpec, findingsOf } from '../helpers/specs';

function rescue(potential: Record<string, number>): object {
  return {
    name: 'rescue-drone',
    discount: 0.95,
    start: 'field',
    actions: ['fly-on', 'turn-back', 'deliver'],
    states: {
      field: { actions: ['fly-on', 'turn-back'] },
      ridge: { actions: ['deliver'] },
      shelter: { terminal: 'goal' },
      base: { terminal: 'neutral' },
    },
    shaping: { potential },
    transitions: [
      { from: 'field', action: 'fly-on', to: 'ridge', reward: -1 },
      { from: 'ridge', action: 'deliver', to: 'shelter', reward: 6 },
      { from: 'field', action: 'turn-back', to: 'base', reward: 0 },
    ],
  };
}

describe('Grzes (2017): a potential on a terminal can change the optimal policy', () => {
  it('Phi(base) = 8 turns the drone back; terminal-potential and shaping-changes-policy both fire', () => {
    // Unshaped: fly-on = -1 + 0.95 * 6 = 4.7 > turn-back = 0. Shaped: turn-back gains 0.95 * 8 = 7.6.
    const report = checkSpec(rescue({ field: 2, ridge: 4, base: 8 }));
    expect(report.analysis!.start.reach.optimal.neutral).toBeCloseTo(1, 6);
    const terminal = findingsOf(report, 'terminal-potential');
    expect(terminal).toHaveLength(1);
    expect(terminal[0].message).toContain("'base'");
    expect(terminal[0].message).toContain('+7.6');
    const changed = findingsOf(report, 'shaping-changes-policy');
    expect(changed).toHaveLength(1);
    expect(changed[0].message).toContain("at 'field' the shaped optimum takes 'turn-back'");
    expect(changed[0].message).toContain("the unshaped optimum takes 'fly-on' (unshaped Q 4.7)");
  });

  it('with Phi(base) = 0 (the quick fix) the same shaping leaves the policy alone (Ng, Harada and Russell 1999)', () => {
    const report = checkSpec(rescue({ field: 2, ridge: 4, base: 8 }));
    const fixed = checkSpec(applyFix(report, findingsOf(report, 'terminal-potential')[0].fixes![0].edits));
    expect(findingsOf(fixed, 'terminal-potential')).toEqual([]);
    expect(findingsOf(fixed, 'shaping-changes-policy')).toEqual([]);
    expect(fixed.analysis!.start.reach.optimal.goal).toBeCloseTo(1, 6);
  });
});
