/**
 * shaping-changes-policy: cases that must fire and cases that must not (scenarios of our own, invented
 * numbers). The published results it rests on are tested in test/incentives/ (Ng, Harada and Russell
 * 1999; Grzes 2017).
 */
import { expect } from 'vitest';
import { testRule } from '../helpers/rule-tester';
import { spanText, type SpecObject } from '../helpers/specs';

/**
 * A sorting arm at the belt: `pick` takes a parcel to the bin (goal, +4), `skip` lets it pass (neutral,
 * 0), via the scanner for `pick`. Shaping is added through `potential` or a `progress` term.
 */
function belt(options: {
  potential?: Record<string, number>;
  progress?: [number, number, number];
  horizon?: number;
  discount?: number;
}): SpecObject {
  const progress = options.progress;
  const reward = (task: number, i: number) => (progress ? { task, progress: progress[i] } : { task });
  return {
    name: 'belt',
    discount: options.discount ?? 0.9,
    ...(options.horizon !== undefined ? { horizon: options.horizon } : {}),
    start: 'belt',
    actions: ['pick', 'skip', 'drop'],
    rewardTerms: { task: { direction: 'either' }, progress: { direction: 'either', shaping: true } },
    states: {
      belt: { actions: ['pick', 'skip'] },
      scanner: { actions: ['drop'] },
      bin: { terminal: 'goal' },
      passed: { terminal: 'neutral' },
    },
    ...(options.potential ? { shaping: { potential: options.potential } } : {}),
    transitions: [
      { from: 'belt', action: 'pick', to: 'scanner', reward: reward(-1, 0) },
      { from: 'scanner', action: 'drop', to: 'bin', reward: reward(4, 1) },
      { from: 'belt', action: 'skip', to: 'passed', reward: reward(0, 2) },
    ],
  };
}

/**
 * Undefined unshaped values (issue 12, found by test/incentives/robustness.test.ts). Minimising at
 * discount 1. Without shaping, `a1` at s2 either stays (-1, one step) or goes round s0 -> s1 -> s2
 * (+5 - 1 - 3 = +1, three steps), each with probability 1/2: 0 per visit of s2 on average, a random
 * walk without drift, so its total has no limit and the unshaped value of s2 is undefined
 * (hand-derived). Which action is best there without shaping is then not known.
 */
const driftless = {
  objective: 'minimize',
  discount: 1,
  start: 's0',
  actions: ['a0', 'a1', 'a2'],
  rewardTerms: { task: { direction: 'either' }, progress: { direction: 'either', shaping: true } },
  states: {
    t0: { terminal: 'neutral' },
    t1: { terminal: 'failure' },
    s0: { actions: ['a0'] },
    s1: { actions: ['a0'] },
    s2: { actions: ['a0', 'a1', 'a2'] },
  },
  shaping: { potential: { s0: 1, s1: 0, s2: -3, t0: -2, t1: 3 } },
  transitions: [
    { from: 's0', action: 'a0', to: [{ state: 's1', probability: 1, reward: { task: -1, progress: 0 } }] },
    { from: 's1', action: 'a0', to: [{ state: 's2', probability: 1, reward: { task: -3, progress: 0 } }] },
    {
      from: 's2',
      action: 'a0',
      to: [
        { state: 's1', probability: 2 / 3, reward: { task: 4, progress: 2 } },
        { state: 't0', probability: 1 / 3, reward: { task: 3, progress: -2 } },
      ],
    },
    {
      from: 's2',
      action: 'a1',
      to: [
        { state: 's0', probability: 0.5, reward: { task: 5, progress: 1 } },
        { state: 's2', probability: 0.5, reward: { task: -1, progress: 2 } },
      ],
    },
    {
      from: 's2',
      action: 'a2',
      to: [
        { state: 's0', probability: 0.25, reward: { task: -1, progress: 1 } },
        { state: 't1', probability: 0.75, reward: { task: -4, progress: 0 } },
      ],
    },
  ],
};

testRule('shaping-changes-policy', {
  invalid: [
    {
      name: 'a potential on the neutral terminal makes skipping best (Grzes 2017 in miniature)',
      // Unshaped: pick = -1 + 0.9*4 = 2.6 > skip = 0. Phi(passed) = 5 adds 0.9*5 = 4.5 to skipping only.
      spec: belt({ potential: { passed: 5 } }),
      findings: [
        {
          says: [
            '1 reachable state',
            "at 'belt' the shaped optimum takes 'skip' (unshaped Q 0)",
            "the unshaped optimum takes 'pick' (unshaped Q 2.6)",
            'earns 0 of the unshaped reward from the start, where the unshaped optimum earns 2.6',
          ],
        },
      ],
      check: (report, [finding]) => {
        expect(spanText(report, finding)).toContain('"skip"');
        expect(finding.related?.some((r) => r.message === 'the shaping potential')).toBe(true);
      },
    },
    {
      name: 'a shaping term that is not potential-based and pays for skipping',
      spec: belt({ progress: [0, 0, 5] }),
      findings: 1,
      check: (_report, [finding]) =>
        expect(finding.related?.some((r) => r.message === "'progress' is marked as shaping")).toBe(true),
    },
  ],
  valid: [
    { name: 'no shaping', spec: belt({}), analysed: true },
    {
      name: 'a potential with Phi = 0 on terminals (Ng, Harada and Russell 1999)',
      spec: belt({ potential: { belt: 7, scanner: -3 } }),
      analysed: true,
    },
    // progress = 0.9*Phi(next) - Phi(state) for Phi(belt) = 2, Phi(scanner) = 1, Phi(terminals) = 0.
    {
      name: 'a shaping term that is potential-based',
      spec: belt({ progress: [0.9 * 1 - 2, 0 - 1, 0 - 2] }),
      analysed: true,
    },
    {
      name: 'a potential on a terminal too small to change the best action',
      spec: belt({ potential: { passed: 1 } }),
      analysed: true,
    },
    {
      name: 'claims no unshaped optimum where the unshaped value is undefined, and prints no NaN anywhere',
      spec: driftless,
      check: (report) => {
        expect(report.internalErrors).toEqual([]);
        for (const finding of report.findings) expect(finding.message).not.toMatch(/NaN/);
      },
    },
  ],
});
