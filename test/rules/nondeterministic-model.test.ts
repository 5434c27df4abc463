/**
 * nondeterministic-model: `outcomes` that answer differently when called again with the same
 * arguments, or a sampled model whose first episodes do not replay under the same seed.
 */
import { expect } from 'vitest';
import { testRule } from '../helpers/rule-tester';

const drifting = `let calls = 0;
export default { discount: 0.9, start: 0, actions: () => ['go'], terminal: (s) => (s >= 3 ? 'goal' : undefined),
  outcomes: (s) => [{ state: s + 1, probability: 1, reward: calls++ }] };`;
const steady = `export default { discount: 0.9, start: 0, actions: () => ['go'], terminal: (s) => (s >= 3 ? 'goal' : undefined),
  outcomes: (s) => [{ state: s + 1, probability: 1, reward: s }] };`;
const forgetful = `let episodes = 0;
export default { discount: 0.9, start: (rng) => { episodes++; return 0; }, actions: () => ['go'],
  sample: (s, a, rng) => ({ state: s + 1, reward: episodes > 1000 ? 2 : 1, terminal: s >= 2 ? 'goal' : undefined }) };`;
const seeded = `export default { discount: 0.9, start: 0, actions: () => ['go'],
  sample: (s, a, rng) => ({ state: s + 1, reward: rng.normal(0, 1), terminal: s >= 2 || rng() < 0.3 ? 'goal' : undefined }) };`;

testRule('nondeterministic-model', {
  valid: [
    { name: 'outcomes that depend on the state only', spec: { typescript: steady } },
    {
      name: 'a sampled model that draws only from the seeded rng',
      spec: { typescript: seeded },
      config: { rollouts: 200 },
    },
  ],
  invalid: [
    {
      name: 'outcomes that count their calls',
      spec: { typescript: drifting },
      // Every rechecked state answers differently (states 0, 1 and 2; 3 is terminal).
      findings: [0, 1, 2].map((s) => ({
        message: new RegExp(
          `^outcomes\\(${s}, "go"\\) answered differently when called again with the same arguments: first ${s + 1} p=1 r=\\d+, then ${s + 1} p=1 r=\\d+`,
        ),
      })),
      check: (report) => expect(report.analysis).toBeUndefined(),
    },
    {
      name: 'a sampled model whose rewards change after the first 1000 episodes',
      spec: { typescript: forgetful },
      config: { rollouts: 1000 },
      findings: [{ message: /^episode 0 of seed 1 took a different trajectory when replayed with the same seed/ }],
    },
  ],
});
