/**
 * unseeded-randomness: model code that draws from a source Episcope cannot seed (Math.random,
 * crypto, the clock), found by reading the source and by counting calls while the model runs.
 */
import { testRule } from '../helpers/rule-tester';
import { counterSpec, FAST_LIMITS } from '../typescript/ts-specs';

testRule('unseeded-randomness', {
  valid: [
    {
      name: 'a model without randomness',
      spec: { typescript: counterSpec(`    return [{ state: { n: s.n + 1 }, probability: 1, reward: -1 }];`) },
      config: FAST_LIMITS,
    },
    {
      name: 'a sampled model that uses the seeded rng',
      spec: {
        typescript: `export default { discount: 0.9, start: 0, actions: () => ['go'], sample: (s, a, rng) => ({ state: s + 1, reward: rng(), terminal: s >= 3 ? 'goal' : undefined }) };`,
      },
      config: { rollouts: 100 },
    },
  ],
  invalid: [
    {
      name: 'Math.random in outcomes',
      spec: {
        typescript: counterSpec(`    return [{ state: { n: s.n + 1 }, probability: 1, reward: Math.random() }];`),
      },
      config: FAST_LIMITS,
      findings: [
        {
          at: 'Math.random',
          message: /^Math\.random is a random source Episcope cannot seed \(called \d+ times while the model ran\)/,
        },
      ],
    },
    {
      name: 'Date.now in a sampled model',
      spec: {
        typescript: `export default { discount: 0.9, start: 0, actions: () => ['go'], sample: (s, a, rng) => ({ state: s + 1, reward: Date.now() % 2, terminal: s >= 3 ? 'goal' : undefined }) };`,
      },
      config: { rollouts: 100 },
      findings: 1,
    },
  ],
});
