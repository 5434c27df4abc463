/**
 * shaping-changes-policy: cases that must fire and cases that must not (scenarios of our own, invented
 * numbers). The published results it rests on are tested in test/incentives/ (Ng, Harada and Russell
 * 1999; Grzes 2017).
 */
import { describe, expect, it } from 'vitest';
import { checkSpec, findingsOf, spanText, type SpecObject } from '../helpers/specs';

/**
 * A sorting arm at the belt: `pick` takes a parcel to the bin (goal, +4), `skip` lets it pass (neutral,
 * 0), via the scanner for `pick`. Shaping is added through `potential` or a `progress` term.
 */
function belt(options: { potential?: Record<string, number>; progress?: [number, number, number]; horizon?: number; discount?: number }): SpecObject {
  const progress = options.progress;
  const reward = (task: number, i: number) => (progress ? { task, progress: progress[i] } : { task });
  return {
    name: 'belt',
    discount: options.discount ?? 0.9,
    ...(options.horizon !== undefined ? { horizon: options.horizon } : {}),
    start: 'belt',
    actions: ['pick', 'skip', 'drop'],
    rewardTerms: { task: { direction: 'either' }, progress: { direction: 'either', shaping: true } },
    states: { belt: { actions: ['pick', 'skip'] }, scanner: { actions: ['drop'] }, bin: { terminal: 'goal' }, passed: { terminal: 'neutral' } },
    ...(options.potential ? { shaping: { potential: options.potential } } : {}),
    transitions: [
      { from: 'belt', action: 'pick', to: 'scanner', reward: reward(-1, 0) },
      { from: 'scanner', action: 'drop', to: 'bin', reward: reward(4, 1) },
      { from: 'belt', action: 'skip', to: 'passed', reward: reward(0, 2) },
    ],
  };
}

describe('shaping-changes-policy: must fire', () => {
  it('a potential on the neutral terminal makes skipping best (Grzes 2017 in miniature)', () => {
    // Unshaped: pick = -1 + 0.9*4 = 2.6 > skip = 0. Phi(passed) = 5 adds 0.9*5 = 4.5 to skipping only.
    const report = checkSpec(belt({ potential: { passed: 5 } }));
    const found = findingsOf(report, 'shaping-changes-policy');
    expect(found).toHaveLength(1);
    const message = found[0].message;
    expect(message).toContain('1 reachable state');
    expect(message).toContain("at 'belt' the shaped optimum takes 'skip' (unshaped Q 0)");
    expect(message).toContain("the unshaped optimum takes 'pick' (unshaped Q 2.6)");
    expect(message).toContain('earns 0 of the unshaped reward from the start, where the unshaped optimum earns 2.6');
    expect(spanText(report, found[0])).toContain('"skip"');
    expect(found[0].related?.some((r) => r.message === 'the shaping potential')).toBe(true);
  });

  it('a shaping term that is not potential-based and pays for skipping', () => {
    const found = findingsOf(checkSpec(belt({ progress: [0, 0, 5] })), 'shaping-changes-policy');
    expect(found).toHaveLength(1);
    expect(found[0].related?.some((r) => r.message === "'progress' is marked as shaping")).toBe(true);
  });
});

describe('shaping-changes-policy: must not fire', () => {
  const cases: Array<[string, SpecObject]> = [
    ['no shaping', belt({})],
    ['a potential with Phi = 0 on terminals (Ng, Harada and Russell 1999)', belt({ potential: { belt: 7, scanner: -3 } })],
    // progress = 0.9*Phi(next) - Phi(state) for Phi(belt) = 2, Phi(scanner) = 1, Phi(terminals) = 0.
    ['a shaping term that is potential-based', belt({ progress: [0.9 * 1 - 2, 0 - 1, 0 - 2] })],
    ['a potential on a terminal too small to change the best action', belt({ potential: { passed: 1 } })],
  ];
  it.each(cases)('%s', (_name, spec) => {
    const report = checkSpec(spec);
    expect(report.notAnalysed).toBeUndefined();
    expect(findingsOf(report, 'shaping-changes-policy')).toEqual([]);
  });
});
