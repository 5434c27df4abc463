/**
 * failure-preferred: cases that must fire and cases that must not (scenarios of our own, invented numbers).
 */
import { testRule } from '../helpers/rule-tester';
import type { SpecObject } from '../helpers/specs';

/**
 * A window-cleaning robot on a facade: `descend` steps down `floors` floors at cost 1 each to the
 * ground (goal); from the top it can also `drop`, ending in a fall (failure) that costs `fall`.
 * `slip` is the chance that a descent step falls instead.
 */
function facade(floors: number, fall: number, slip = 0): SpecObject {
  const states: Record<string, object> = { ground: { terminal: 'goal' }, fallen: { terminal: 'failure' } };
  const transitions: object[] = [];
  for (let i = floors; i >= 1; i--) {
    states[`floor${i}`] = { actions: i === floors ? ['descend', 'drop'] : ['descend'] };
    const next = i === 1 ? 'ground' : `floor${i - 1}`;
    transitions.push({
      from: `floor${i}`,
      action: 'descend',
      to:
        slip > 0
          ? [
              { state: next, probability: 1 - slip, reward: -1 },
              { state: 'fallen', probability: slip, reward: -1 },
            ]
          : next,
      reward: -1,
    });
  }
  transitions.push({ from: `floor${floors}`, action: 'drop', to: 'fallen', reward: fall });
  return { name: 'facade', discount: 1, start: `floor${floors}`, actions: ['descend', 'drop'], states, transitions };
}

testRule('failure-preferred', {
  valid: [
    { name: 'falling costs more than the way down', spec: facade(10, -20), analysed: true },
    // Every descent step slips with 5%: failure is likely on any route, but the optimal policy does not seek it.
    { name: 'failure that no policy can avoid', spec: facade(10, -20, 0.05), analysed: true },
  ],
  invalid: [
    {
      name: 'dropping costs 2, the way down costs 10',
      spec: facade(10, -2),
      findings: [
        {
          at: '"fallen"',
          says: [
            'ends in failure with probability 100%',
            'reaches a goal with 0%',
            'failing returns -2.0 from the start',
            'route to a goal returns -10.0',
          ],
          trace: ['floor10', 'fallen'],
        },
      ],
    },
  ],
});
