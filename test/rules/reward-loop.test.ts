/**
 * reward-loop: cases that must fire and cases that must not (scenarios of our own, invented numbers).
 */
import { describe, expect, it } from 'vitest';
import { checkSpec, findingsOf, spanText, type SpecObject } from '../helpers/specs';

/**
 * A museum guide robot: from the hallway it can visit the charging pad (paying `pad` each way) or
 * take visitors to the exit (paying `exit`).
 */
function museum(discount: number, pad: number, exit: number, overrides: SpecObject = {}): SpecObject {
  return {
    name: 'museum',
    discount,
    start: 'hallway',
    actions: ['to-pad', 'to-hallway', 'to-exit'],
    states: { hallway: { actions: ['to-pad', 'to-exit'] }, pad: { actions: ['to-hallway'] }, exit: { terminal: 'goal' } },
    transitions: [
      { from: 'hallway', action: 'to-pad', to: 'pad', reward: pad },
      { from: 'pad', action: 'to-hallway', to: 'hallway', reward: pad },
      { from: 'hallway', action: 'to-exit', to: 'exit', reward: exit },
    ],
    ...overrides,
  };
}

describe('reward-loop: must fire', () => {
  it('a bonus for each visit of the pad beats taking visitors out', () => {
    // The loop pays 2 per step: 2/(1-0.9) = 20 from the hallway, against 7 for the exit.
    const report = checkSpec(museum(0.9, 2, 7));
    const found = findingsOf(report, 'reward-loop');
    expect(found).toHaveLength(1);
    const message = found[0].message;
    expect(message).toContain('hallway -> pad -> hallway');
    expect(message).toContain('+4.0 per lap');
    expect(message).toContain('ends with probability 0%');
    expect(message).toContain('reached with 100%');
    expect(message).toContain('earns 20.0 from the start');
    expect(message).toContain('route to a goal earns 7.0');
    expect(found[0].trace?.map((t) => t.state)).toEqual(['hallway', 'pad', 'hallway']);
    expect(found[0].related?.map((r) => spanText(report, r))).toEqual(['"pad"', '"hallway"']);
  });

  it('a loop entered by part of the start distribution, with a lower configured gap', () => {
    const spec = museum(0.9, 2, 7, {
      start: { hallway: 0.1, lobby: 0.9 },
      states: { lobby: { actions: ['to-exit'] }, hallway: { actions: ['to-pad', 'to-exit'] }, pad: { actions: ['to-hallway'] }, exit: { terminal: 'goal' } },
      transitions: [
        { from: 'lobby', action: 'to-exit', to: 'exit', reward: 7 },
        { from: 'hallway', action: 'to-pad', to: 'pad', reward: 2 },
        { from: 'pad', action: 'to-hallway', to: 'hallway', reward: 2 },
        { from: 'hallway', action: 'to-exit', to: 'exit', reward: 7 },
      ],
    });
    expect(findingsOf(checkSpec(spec), 'reward-loop')).toEqual([]);
    expect(findingsOf(checkSpec(spec, { thresholds: { 'reward-loop.probabilityGap': 0.05 } }), 'reward-loop')).toHaveLength(1);
  });
});

describe('reward-loop: must not fire', () => {
  const cases: Array<[string, SpecObject]> = [
    ['the exit pays more than the loop ever can', museum(0.9, 0.5, 7)],
    ['the loop costs', museum(0.9, -1, 7)],
    ['discount 1 makes the loop infinite: unbounded-return reports it', museum(1, 2, 7)],
  ];
  it.each(cases)('%s', (_name, spec) => {
    const report = checkSpec(spec);
    expect(report.notAnalysed).toBeUndefined();
    expect(findingsOf(report, 'reward-loop')).toEqual([]);
  });
});
