/**
 * horizon-too-short: cases that must fire and cases that must not (scenarios of our own, invented numbers).
 */
import { expect } from 'vitest';
import { testRule } from '../helpers/rule-tester';
import type { SpecObject } from '../helpers/specs';

/** A harvest drone crossing `rows` rows to the collection point within `horizon` steps. */
function field(rows: number, horizon?: number, overrides: SpecObject = {}): SpecObject {
  const states: Record<string, object> = { collect: { terminal: 'goal' } };
  const transitions: object[] = [];
  for (let i = 0; i < rows; i++) {
    states[`row${i}`] = {};
    const next = i + 1 === rows ? 'collect' : `row${i + 1}`;
    transitions.push({ from: `row${i}`, action: 'fly', to: next, reward: next === 'collect' ? 10 : -1 });
    transitions.push({ from: `row${i}`, action: 'hover', to: `row${i}`, reward: -1 });
  }
  return {
    name: 'field',
    discount: 1,
    ...(horizon !== undefined ? { horizon } : {}),
    start: 'row0',
    actions: ['fly', 'hover'],
    states,
    transitions,
    ...overrides,
  };
}

testRule('horizon-too-short', {
  valid: [
    { name: 'a horizon exactly as long as the route', spec: field(10, 10), analysed: true },
    { name: 'no horizon', spec: field(10), analysed: true },
    {
      name: 'no goal at all',
      spec: field(3, 1, { states: { row0: {}, row1: {}, row2: {}, collect: { terminal: 'neutral' } } }),
      analysed: true,
    },
  ],
  invalid: [
    {
      name: 'a goal 10 steps away with a horizon of 6; the fix raises the horizon to the distance',
      spec: field(10, 6),
      findings: [
        {
          at: '6',
          says: ['horizon 6', '10 steps away', 'every episode'],
          trace: [...Array.from({ length: 10 }, (_, i) => `row${i}`), 'collect'],
          fixes: [/./],
        },
      ],
      afterFix: (fixed) => expect(fixed.text).toContain('"horizon": 10'),
    },
    {
      name: 'the share of the start distribution that cannot make it',
      spec: field(10, 6, { start: { row0: 0.25, row8: 0.75 } }),
      findings: [{ says: ['25% of episodes'] }],
    },
  ],
});
