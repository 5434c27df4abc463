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

/**
 * Whether a trace reads right: every step's action, taken in its state, has an outcome into the state
 * listed next (as a reader follows "s --a--> next"). A state listed without an action is a break.
 */
function isWalk(spec: SpecObject, trace: ReadonlyArray<{ state: string; action?: string }>): boolean {
  const transitions = spec.transitions as Array<{ from: string; action: string; to: string | Record<string, number> }>;
  return trace.slice(0, -1).every(
    (step, i) =>
      !step.action ||
      transitions.some((t) => t.from === step.state && t.action === step.action && (typeof t.to === 'string' ? [t.to] : Object.keys(t.to)).includes(trace[i + 1].state)),
  );
}

const traceText = (trace: ReadonlyArray<{ state: string; action?: string }>) => trace.map((t) => (t.action ? `${t.state} --${t.action}-->` : t.state));

describe('shaping-not-potential: the trace is a walk', () => {
  /** A courier on a line a -> b -> c -> depot; `progress` pays +1 forward and 0 back (not a potential). */
  const line = (discount: number): SpecObject => ({
    name: 'line',
    discount,
    start: 'a',
    actions: ['fwd', 'back'],
    rewardTerms: { task: { direction: 'either' }, progress: { direction: 'either', shaping: true } },
    states: { a: {}, b: {}, c: {}, depot: { terminal: 'goal' } },
    transitions: [
      { from: 'a', action: 'fwd', to: 'b', reward: { task: -1, progress: 1 } },
      { from: 'a', action: 'back', to: 'a', reward: { task: -1 } },
      { from: 'b', action: 'fwd', to: 'c', reward: { task: -1, progress: 1 } },
      { from: 'b', action: 'back', to: 'a', reward: { task: -1, progress: 0 } },
      { from: 'c', action: 'fwd', to: 'depot', reward: { task: 10 } },
      { from: 'c', action: 'back', to: 'b', reward: { task: -1, progress: 0 } },
    ],
  });

  it('discount 0.9: the contradicting route in walking order, ending at the terminal', () => {
    // Phi(depot) = 0 gives Phi(c) = 0 from c --fwd--> depot; c --back--> b --fwd--> c --fwd--> depot gives
    // Phi(c) = 0.9*Phi(b) with Phi(b) = 0.9*Phi(c) - 1 = -1, so Phi(c) = -0.9 (by hand).
    const spec = line(0.9);
    const [finding] = findingsOf(checkSpec(spec), 'shaping-not-potential');
    expect(finding.message).toContain('gives Phi(c) = 0, but c --back--> b (0), b --fwd--> c (+1.0), c --fwd--> depot (0) gives Phi(c) = -0.9');
    expect(traceText(finding.trace!)).toEqual(['c --back-->', 'b --fwd-->', 'c --fwd-->', 'depot']);
    expect(isWalk(spec, finding.trace!)).toBe(true);
  });

  it.each([0.5, 0.9, 1])('discount %s: every step leads to the state listed next', (discount) => {
    for (const spec of [line(discount), corridor(discount, 1, 0, -2)]) {
      const [finding] = findingsOf(checkSpec(spec), 'shaping-not-potential');
      const trace = finding.trace!;
      expect(trace.length).toBeGreaterThan(1);
      // A route that can be walked has no breaks: only the last state stands without an action.
      expect(trace.slice(0, -1).every((t) => t.action)).toBe(true);
      expect(isWalk(spec, trace), JSON.stringify(traceText(trace))).toBe(true);
    }
  });

  /** `enter` leads from the yard into a pen that only `pace` (a self-loop) leaves; `exit` ends from the yard. */
  const pen = (discount: number, exitAmount: number): SpecObject => ({
    name: 'pen',
    discount,
    start: 'yard',
    actions: ['exit', 'enter', 'pace'],
    rewardTerms: { progress: { direction: 'either', shaping: true } },
    states: { yard: { actions: ['exit', 'enter'] }, pen: { actions: ['pace'] }, gate: { terminal: 'goal' } },
    transitions: [
      { from: 'yard', action: 'exit', to: 'gate', reward: { progress: exitAmount } },
      { from: 'yard', action: 'enter', to: 'pen', reward: { progress: 1 } },
      { from: 'pen', action: 'pace', to: 'pen', reward: { progress: 1 } },
    ],
  });

  it('a route that goes against a transition breaks the trace instead of naming a move that does not exist', () => {
    // The pen cannot reach the gate, so Phi(pen) comes from yard --enter--> pen (along the transition):
    // Phi(yard) = 0, Phi(pen) = 1/0.9 = 1.11, while pen --pace--> pen needs Phi(pen) = 0.9*Phi(pen) - 1 = -10 (by hand).
    const spec = pen(0.9, 0);
    const [finding] = findingsOf(checkSpec(spec), 'shaping-not-potential');
    expect(finding.message).toContain('gives Phi(pen) = 1.11');
    expect(traceText(finding.trace!)).toEqual(['yard --exit-->', 'gate', 'yard --enter-->', 'pen --pace-->', 'pen']);
    expect(isWalk(spec, finding.trace!)).toBe(true);
  });

  it('discount 1: a cycle walked partly backwards breaks where it goes against a transition', () => {
    // Both yard and pen end at the gate; entering the pen pays +1, the two exits pay 0.
    const spec: SpecObject = {
      ...pen(1, 0),
      states: { yard: { actions: ['exit', 'enter'] }, pen: { actions: ['leave'] }, gate: { terminal: 'goal' } },
      actions: ['exit', 'enter', 'leave'],
      transitions: [
        { from: 'yard', action: 'exit', to: 'gate', reward: { progress: 0 } },
        { from: 'yard', action: 'enter', to: 'pen', reward: { progress: 1 } },
        { from: 'pen', action: 'leave', to: 'gate', reward: { progress: 0 } },
      ],
    };
    // Phi(gate) = 0 gives Phi(yard) = 0 and Phi(pen) = 0, but yard --enter--> pen pays 1: the cycle
    // yard -> pen -> gate <- yard goes against yard --exit--> gate once.
    const [finding] = findingsOf(checkSpec(spec), 'shaping-not-potential');
    expect(finding.message).toContain('taken backwards');
    const trace = finding.trace!;
    expect(trace.filter((t) => t.action).map((t) => `${t.state}/${t.action}`).sort()).toEqual(['pen/leave', 'yard/enter', 'yard/exit']);
    expect(trace.filter((t) => !t.action)).toHaveLength(2);
    expect(isWalk(spec, trace), JSON.stringify(traceText(trace))).toBe(true);
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
