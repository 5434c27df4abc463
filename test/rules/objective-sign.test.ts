/**
 * objective-sign: cases that must fire and cases that must not (scenarios of our own, invented numbers).
 */
import { describe, expect, it } from 'vitest';
import { checkSpec, findingsOf, spanText, type SpecObject } from '../helpers/specs';

/** A climbing robot: from the ledge it can reach the summit (goal) or fall (failure). */
function ledge(summit: number, fall: number, overrides: SpecObject = {}, extra: SpecObject = {}): SpecObject {
  return {
    name: 'ledge',
    discount: 0.9,
    start: 'base',
    actions: ['climb', 'let-go'],
    states: { base: { actions: ['climb'] }, ledge: {}, summit: { terminal: 'goal' }, ground: { terminal: 'failure' } },
    transitions: [
      { from: 'base', action: 'climb', to: 'ledge', reward: -1 },
      { from: 'ledge', action: 'climb', to: 'summit', reward: summit },
      { from: 'ledge', action: 'let-go', to: 'ground', reward: fall },
    ],
    ...overrides,
    ...extra,
  };
}

describe('objective-sign: must fire', () => {
  const cases: Array<[string, SpecObject, string]> = [
    ['a crash penalty written with the wrong sign', ledge(3, 5), '"ground"'],
    ['no goal bonus while the last step still costs, and failing is free', ledge(-1, 0), '"ground"'],
    ['under minimize (costs), failing costs less than succeeding', ledge(3, 1, { objective: 'minimize' }), '"ground"'],
  ];
  it.each(cases)('%s', (_name, spec, target) => {
    const report = checkSpec(spec);
    const found = findingsOf(report, 'objective-sign');
    expect(found).toHaveLength(1);
    // The finding sits on the outcome that enters the failure and names both entries with their rewards.
    expect(spanText(report, found[0])).toBe(target);
    expect(found[0].message).toContain("'ground'");
    expect(found[0].message).toContain("'summit'");
    expect(found[0].related?.length).toBeGreaterThan(0);
  });

  it('states both rewards and the difference in the message', () => {
    const found = findingsOf(checkSpec(ledge(2, 7)), 'objective-sign');
    expect(found[0].message).toMatch(/\+7\.0.*\+2\.0.*by 5\.0/);
  });
});

describe('objective-sign: must not fire', () => {
  const cases: Array<[string, SpecObject]> = [
    ['goal pays more than failure', ledge(10, -10)],
    ['a tie is allowed', ledge(-1, -1)],
    ['under minimize, failing costs more', ledge(1, 50, { objective: 'minimize' })],
    ['no failure terminal', ledge(10, 5, {}, { states: { base: { actions: ['climb'] }, ledge: {}, summit: { terminal: 'goal' }, ground: { terminal: 'neutral' } } })],
    [
      'shaping on the failure entry does not count, only the task reward',
      ledge(10, -10, {}, {
        rewardTerms: { task: { direction: 'either' }, progress: { direction: 'either', shaping: true } },
        transitions: [
          { from: 'base', action: 'climb', to: 'ledge', reward: { task: -1 } },
          { from: 'ledge', action: 'climb', to: 'summit', reward: { task: 10 } },
          { from: 'ledge', action: 'let-go', to: 'ground', reward: { task: -10, progress: 30 } },
        ],
      }),
    ],
  ];
  it.each(cases)('%s', (_name, spec) => {
    const report = checkSpec(spec);
    expect(report.notAnalysed).toBeUndefined();
    expect(findingsOf(report, 'objective-sign')).toEqual([]);
  });
});
