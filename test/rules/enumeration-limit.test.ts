/**
 * enumeration-limit: an enumerable model with more states than the state cap gets rollout estimates
 * instead of exact values. Counting is exact: a chain 0, 1, 2, ... has n + 1 states up to n.
 */
import { expect } from 'vitest';
import { testRule } from '../helpers/rule-tester';

const endless = `export default { discount: 0.9, start: 0, actions: () => ['more'], outcomes: (n) => [{ state: n + 1, probability: 1, reward: 1 }] };`;
const ten = `export default { discount: 0.9, start: 0, actions: () => ['more'], terminal: (n) => (n >= 9 ? 'goal' : undefined),
  outcomes: (n) => [{ state: n + 1, probability: 1, reward: 1 }] };`;

testRule('enumeration-limit', {
  valid: [
    { name: 'ten states under a cap of 50', spec: { typescript: ten }, config: { stateCap: 50 } },
    { name: 'ten states at a cap of exactly 10', spec: { typescript: ten }, config: { stateCap: 10 } },
  ],
  invalid: [
    {
      name: 'an endless chain stops at the cap and is estimated by rollouts',
      spec: { typescript: endless },
      config: { stateCap: 50, rollouts: 100 },
      findings: [{ at: 'outcomes', message: /enumeration stopped at the state cap of 50 states/ }],
      check: (report) => {
        expect(report.analysis).toBeUndefined();
        // 1 per step discounted by 0.9 until the step cap: 10 (1 - 0.9^cap), which is 10 to double precision.
        expect(report.rollouts?.random?.return.mean).toBeCloseTo(10, 9);
      },
    },
    {
      name: 'ten states over a cap of 9',
      spec: { typescript: ten },
      config: { stateCap: 9 },
      findings: [{ at: 'outcomes', message: /state cap of 9 states/ }],
    },
  ],
});
