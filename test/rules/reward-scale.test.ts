/**
 * reward-scale: rewards far above 1e3 in magnitude, or spanning more than a factor 1e4, are hard
 * for learners tuned to one scale (common practice); scaling all rewards by one positive factor
 * scales every return alike, so the optimal policy is kept.
 */
import { expect } from 'vitest';
import { testRule } from '../helpers/rule-tester';
import { chainSpec, findingsOf } from '../helpers/specs';

const rewards = (first: unknown, second: unknown, objective = 'maximize') =>
  chainSpec({
    objective,
    transitions: [
      { from: 'a', action: 'go', to: 'b', reward: first },
      { from: 'b', action: 'go', to: 'goal', reward: second },
    ],
  });

testRule('reward-scale', {
  valid: [
    { name: 'rewards within range', spec: rewards(-1, 10) },
    { name: 'zero rewards are ignored', spec: rewards(0, 1000) },
    { name: 'just within both limits', spec: rewards(-0.1, 999) },
    {
      name: 'a non-finite reward is ignored (non-finite-reward reports it)',
      spec: JSON.stringify(rewards(-1, 10)).replace('"reward":10', '"reward":1e400'),
      check: (report) => expect(findingsOf(report, 'non-finite-reward')).toHaveLength(1),
    },
    {
      name: 'configured thresholds above the rewards',
      spec: rewards(-1, 5000),
      config: { thresholds: { 'reward-scale.maxMagnitude': 1e4, 'reward-scale.maxRatio': 1e6 } },
    },
  ],
  invalid: [
    {
      name: 'a reward above 1e3 in magnitude, as info',
      spec: rewards(-1, 5000),
      findings: [
        {
          at: '5000',
          severity: 'info',
          message: `the reward 5000 of transitions[1] ('b' --go-->) exceeds 1000 in magnitude: learners tuned to one scale treat the smallest rewards as noise and large value targets destabilise training; dividing every reward by the same positive factor keeps the optimal policy`,
        },
      ],
      check: (_report, [finding]) => expect(finding.related).toBeUndefined(),
    },
    {
      name: 'non-zero rewards spanning more than a factor 1e4, at the largest with the smallest related',
      spec: rewards({ time: -0.001 }, 500),
      findings: [
        {
          at: '500',
          message:
            /^rewards span a factor of 500000 in magnitude, from -0\.001 \(transitions\[0\] \('a' --go-->\) term 'time'\) to 500, more than 10000: /,
          related: ['-0.001'],
        },
      ],
    },
    {
      name: 'both problems in one finding, speaking of costs under minimize',
      spec: rewards(0.01, 2000, 'minimize'),
      findings: [{ message: /^the cost 2000 of .* exceeds 1000 in magnitude; costs span a factor of 200000/ }],
    },
    {
      name: 'a configured lower magnitude',
      spec: rewards(-1, 5000),
      config: { thresholds: { 'reward-scale.maxMagnitude': 100 } },
      findings: 1,
    },
  ],
});
