/**
 * terminal-potential: cases that must fire and cases that must not (scenarios of our own, invented numbers).
 * Potential-based shaping keeps the optimal policy only with a potential of 0 at terminals
 * (Ng, Harada and Russell, "Policy invariance under reward transformations", ICML 1999).
 */
import { expect } from 'vitest';
import type { Finding } from '../../server/src/rules/types';
import { testRule } from '../helpers/rule-tester';
import type { SpecObject } from '../helpers/specs';

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

const namesTerminal = (_report: unknown, [finding]: Finding[]) =>
  expect(finding.related?.[0].message).toContain('declared terminal');

testRule('terminal-potential', {
  valid: [
    { name: 'potentials only on non-terminal states', spec: parking({ lane: 4 }) },
    { name: 'an explicit 0 on a terminal', spec: parking({ lane: 4, bay: 0, wall: 0 }) },
  ],
  invalid: [
    // discount * Phi is what entering the terminal gains from the shaping: 0.9 * 3 = 2.7.
    {
      name: 'a potential on the goal; the fix sets it to 0',
      spec: parking({ lane: 1, bay: 3 }),
      findings: [{ at: '"bay"', says: ['+2.7'], fixes: [/./] }],
      check: namesTerminal,
      afterFix: (fixed) => expect(fixed.text).toContain('"bay": 0'),
    },
    // 0.9 * -2 = -1.8.
    {
      name: 'a negative potential on the failure',
      spec: parking({ lane: 1, wall: -2 }),
      findings: [{ at: '"wall"', says: ['-1.8'] }],
      check: namesTerminal,
    },
  ],
});
