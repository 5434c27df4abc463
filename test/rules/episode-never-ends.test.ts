/**
 * episode-never-ends: a sampled model at discount 1 with no horizon whose rollouts run to the step
 * cap. With `stop` ending the episode with probability 1e-4 per step and the policy choosing it half
 * the time, an episode ends within 100 steps with probability 1 - (1 - 5e-5)^100, about 0.5%
 * (hand-derived), so nearly every rollout hits the cap.
 */
import { testRule } from '../helpers/rule-tester';

const sticky = `export default { discount: 1, start: 0, actions: () => ['wait', 'stop'],
  sample: (s, a, rng) => ({ state: s, reward: -1, terminal: a === 'stop' && rng() < 0.0001 ? 'goal' : undefined }) };`;
const quick = `export default { discount: 1, start: 0, actions: () => ['go'],
  sample: (s, a, rng) => ({ state: s + 1, reward: -1, terminal: s >= 3 ? 'goal' : undefined }) };`;
const config = { rollouts: 200, thresholds: { 'episode-never-ends.stepCap': 100 } };

testRule('episode-never-ends', {
  valid: [
    {
      name: 'the same model with a horizon of 50',
      spec: { typescript: sticky.replace('discount: 1,', 'discount: 1, horizon: 50,') },
      config,
    },
    { name: 'episodes of five steps', spec: { typescript: quick }, config },
    {
      name: 'discount below 1 (returns stay bounded)',
      spec: { typescript: sticky.replace('discount: 1,', 'discount: 0.99,') },
      config,
    },
  ],
  invalid: [
    {
      name: 'rollouts that run 100 steps without ending',
      spec: { typescript: sticky },
      config,
      findings: [{ at: '1', message: /^\d+ of 200 rollouts \(\d+\.\d%\) ran 100 steps without ending/ }],
    },
  ],
});
