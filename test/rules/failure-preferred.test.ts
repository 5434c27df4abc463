/**
 * failure-preferred: cases that must fire and cases that must not (scenarios of our own, invented numbers).
 */
import { describe, expect, it } from 'vitest';
import { checkSpec, findingsOf, spanText, type SpecObject } from '../helpers/specs';

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
      to: slip > 0 ? [{ state: next, probability: 1 - slip, reward: -1 }, { state: 'fallen', probability: slip, reward: -1 }] : next,
      reward: -1,
    });
  }
  transitions.push({ from: `floor${floors}`, action: 'drop', to: 'fallen', reward: fall });
  return { name: 'facade', discount: 1, start: `floor${floors}`, actions: ['descend', 'drop'], states, transitions };
}

describe('failure-preferred: must fire', () => {
  it('dropping costs 2, the way down costs 10', () => {
    const report = checkSpec(facade(10, -2));
    const found = findingsOf(report, 'failure-preferred');
    expect(found).toHaveLength(1);
    const message = found[0].message;
    expect(message).toContain('ends in failure with probability 100%');
    expect(message).toContain('reaches a goal with 0%');
    expect(message).toContain('failing returns -2.0 from the start');
    expect(message).toContain('route to a goal returns -10.0');
    expect(spanText(report, found[0])).toBe('"fallen"');
    expect(found[0].trace?.map((t) => t.state)).toEqual(['floor10', 'fallen']);
  });
});

describe('failure-preferred: must not fire', () => {
  const cases: Array<[string, SpecObject]> = [
    ['falling costs more than the way down', facade(10, -20)],
    // Every descent step slips with 5%: failure is likely on any route, but the optimal policy does not seek it.
    ['failure that no policy can avoid', facade(10, -20, 0.05)],
  ];
  it.each(cases)('%s', (_name, spec) => {
    const report = checkSpec(spec);
    expect(report.notAnalysed).toBeUndefined();
    expect(findingsOf(report, 'failure-preferred')).toEqual([]);
  });
});
