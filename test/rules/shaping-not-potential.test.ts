/**
 * shaping-not-potential: cases that must fire and cases that must not (scenarios of our own, invented
 * numbers). The exactness of the underlying check is tested in test/incentives/shaping-potential.test.ts.
 */
import { describe, expect, it } from 'vitest';
import { checkSpec, findingsOf, spanText, type SpecObject } from '../helpers/specs';

/**
 * A maze runner in a corridor hall <-> pad -> exit with a `progress` term marked shaping.
 * `forward`, `back` and `leave` are the progress amounts of the three moves.
 */
function corridor(discount: number, forward: number, back: number, leave: number, shaping = true): SpecObject {
  return {
    name: 'corridor',
    discount,
    start: 'hall',
    actions: ['ahead', 'back', 'leave'],
    rewardTerms: { step: { direction: 'penalty' }, progress: { direction: 'either', shaping } },
    states: { hall: { actions: ['ahead'] }, pad: { actions: ['back', 'leave'] }, exit: { terminal: 'goal' } },
    transitions: [
      { from: 'hall', action: 'ahead', to: 'pad', reward: { step: -1, progress: forward } },
      { from: 'pad', action: 'back', to: 'hall', reward: { step: -1, progress: back } },
      { from: 'pad', action: 'leave', to: 'exit', reward: { step: -1, progress: leave } },
    ],
  };
}

describe('shaping-not-potential: must fire', () => {
  it('discount 1: progress paid forward but not taken back nets +1 per lap', () => {
    const report = checkSpec(corridor(1, 1, 0, 0));
    const found = findingsOf(report, 'shaping-not-potential');
    expect(found).toHaveLength(1);
    expect(found[0].message).toMatch(/nets [+-]1\.0/);
    expect(found[0].message).toContain('hall --ahead--> pad');
    expect(found[0].message).toContain('pad --back--> hall');
    // The trace and the related locations are the two transitions of the cycle.
    const trace = found[0].trace!;
    expect(trace.filter((t) => t.action).map((t) => `${t.state}/${t.action}`).sort()).toEqual(['hall/ahead', 'pad/back']);
    expect(trace[trace.length - 1].state).toBe(trace[0].state);
    expect(found[0].related?.map((r) => spanText(report, r)).sort()).toEqual(['"hall"', '"pad"']);
  });

  it('discount 0.9: the route out implies a different potential than the loop', () => {
    // Phi(exit) = 0 gives Phi(pad) = -leave = 2; then hall --ahead--> pad needs Phi(hall) = 0.9*2 - 1 = 0.8,
    // and pad --back--> hall needs Phi(pad) = 0.9*0.8 - 0 = 0.72, not 2.
    const found = findingsOf(checkSpec(corridor(0.9, 1, 0, -2)), 'shaping-not-potential');
    expect(found).toHaveLength(1);
    expect(found[0].message).toContain('Phi = 0 on terminals');
    expect(found[0].message).toMatch(/Phi\((pad|hall)\) = /);
  });
});

describe('shaping-not-potential: must not fire', () => {
  const phi = { hall: 3, pad: 2, exit: 0 };
  const f = (discount: number, s: keyof typeof phi, t: keyof typeof phi) => discount * phi[t] - phi[s];
  const cases: Array<[string, SpecObject]> = [
    ['amounts derived from a potential (discount 1)', corridor(1, f(1, 'hall', 'pad'), f(1, 'pad', 'hall'), f(1, 'pad', 'exit'))],
    ['amounts derived from a potential (discount 0.9)', corridor(0.9, f(0.9, 'hall', 'pad'), f(0.9, 'pad', 'hall'), f(0.9, 'pad', 'exit'))],
    ['the same non-potential amounts in a term not marked shaping', corridor(1, 1, 0, 0, false)],
  ];
  it.each(cases)('%s', (_name, spec) => {
    const report = checkSpec(spec);
    expect(report.notAnalysed).toBeUndefined();
    expect(findingsOf(report, 'shaping-not-potential')).toEqual([]);
  });

  it('honours a configured tolerance for hand-rounded amounts', () => {
    // Phi(hall) = 1/3, Phi(pad) = 2/3, Phi(exit) = 0 at discount 0.9, amounts written to four digits.
    const rounded = corridor(0.9, 0.2667, -0.3667, -0.6667);
    expect(findingsOf(checkSpec(rounded), 'shaping-not-potential')).toHaveLength(1);
    expect(findingsOf(checkSpec(rounded, { thresholds: { 'shaping-not-potential.tolerance': 1e-3 } }), 'shaping-not-potential')).toEqual([]);
  });
});
