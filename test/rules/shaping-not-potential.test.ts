/**
 * shaping-not-potential: cases that must fire and cases that must not (scenarios of our own, invented
 * numbers). The exactness of the underlying check is tested in test/incentives/shaping-potential.test.ts.
 */
import { expect } from 'vitest';
import type { TraceStep } from '../../server/src/findings';
import { type InvalidCase, testRule } from '../helpers/rule-tester';
import { spanText, type SpecObject } from '../helpers/specs';

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

/**
 * Whether a trace reads right: every step's action, taken in its state, has an outcome into the state
 * listed next (as a reader follows "s --a--> next"). A state listed without an action is a break.
 */
function isWalk(spec: SpecObject, trace: ReadonlyArray<{ state: string; action?: string }>): boolean {
  const transitions = spec.transitions as Array<{ from: string; action: string; to: string | Record<string, number> }>;
  return trace
    .slice(0, -1)
    .every(
      (step, i) =>
        !step.action ||
        transitions.some(
          (t) =>
            t.from === step.state &&
            t.action === step.action &&
            (typeof t.to === 'string' ? [t.to] : Object.keys(t.to)).includes(trace[i + 1].state),
        ),
    );
}

const traceText = (trace: ReadonlyArray<{ state: string; action?: string }>) =>
  trace.map((t) => (t.action ? `${t.state} --${t.action}-->` : t.state));

/** The (state/action) pairs of a trace's moves, sorted, for a cycle whose first state is not fixed. */
const movesOf = (trace: readonly TraceStep[]) =>
  trace
    .filter((t) => t.action)
    .map((t) => `${t.state}/${t.action}`)
    .sort();

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

/** Both yard and pen end at the gate; entering the pen pays +1, the two exits pay 0. */
const twoExits: SpecObject = {
  ...pen(1, 0),
  states: { yard: { actions: ['exit', 'enter'] }, pen: { actions: ['leave'] }, gate: { terminal: 'goal' } },
  actions: ['exit', 'enter', 'leave'],
  transitions: [
    { from: 'yard', action: 'exit', to: 'gate', reward: { progress: 0 } },
    { from: 'yard', action: 'enter', to: 'pen', reward: { progress: 1 } },
    { from: 'pen', action: 'leave', to: 'gate', reward: { progress: 0 } },
  ],
};

/** Every step leads to the state listed next, on both scenarios at each discount. */
const walkCases: InvalidCase[] = [0.5, 0.9, 1].flatMap((discount) =>
  [
    ['line', line(discount)],
    ['corridor', corridor(discount, 1, 0, -2)],
  ].map(([scenario, spec]) => ({
    name: `the trace is a walk: discount ${discount}, the ${scenario as string}, every step leads to the state listed next`,
    spec: spec as SpecObject,
    findings: 1,
    check: (_report, [finding]) => {
      const trace = finding.trace!;
      expect(trace.length).toBeGreaterThan(1);
      // A route that can be walked has no breaks: only the last state stands without an action.
      expect(trace.slice(0, -1).every((t) => t.action)).toBe(true);
      expect(isWalk(spec as SpecObject, trace), JSON.stringify(traceText(trace))).toBe(true);
    },
  })),
);

const phi = { hall: 3, pad: 2, exit: 0 };
const f = (discount: number, s: keyof typeof phi, t: keyof typeof phi) => discount * phi[t] - phi[s];
/** Phi(hall) = 1/3, Phi(pad) = 2/3, Phi(exit) = 0 at discount 0.9, amounts written to four digits. */
const rounded = corridor(0.9, 0.2667, -0.3667, -0.6667);

testRule('shaping-not-potential', {
  invalid: [
    {
      name: 'discount 1: progress paid forward but not taken back nets +1 per lap',
      spec: corridor(1, 1, 0, 0),
      findings: [{ message: /nets [+-]1\.0/, says: ['hall --ahead--> pad', 'pad --back--> hall'] }],
      check: (report, [finding]) => {
        // The trace and the related locations are the two transitions of the cycle.
        const trace = finding.trace!;
        expect(movesOf(trace)).toEqual(['hall/ahead', 'pad/back']);
        expect(trace[trace.length - 1].state).toBe(trace[0].state);
        expect(finding.related?.map((r) => spanText(report, r)).sort()).toEqual(['"hall"', '"pad"']);
      },
    },
    {
      name: 'discount 0.9: the route out implies a different potential than the loop',
      // Phi(exit) = 0 gives Phi(pad) = -leave = 2; then hall --ahead--> pad needs Phi(hall) = 0.9*2 - 1 = 0.8,
      // and pad --back--> hall needs Phi(pad) = 0.9*0.8 - 0 = 0.72, not 2.
      spec: corridor(0.9, 1, 0, -2),
      findings: [{ says: ['Phi = 0 on terminals'], message: /Phi\((pad|hall)\) = / }],
    },
    {
      name: 'the trace is a walk: discount 0.9, the contradicting route in walking order, ending at the terminal',
      // Phi(depot) = 0 gives Phi(c) = 0 from c --fwd--> depot; c --back--> b --fwd--> c --fwd--> depot gives
      // Phi(c) = 0.9*Phi(b) with Phi(b) = 0.9*Phi(c) - 1 = -1, so Phi(c) = -0.9 (by hand).
      spec: line(0.9),
      findings: [
        {
          says: [
            'gives Phi(c) = 0, but c --back--> b (0), b --fwd--> c (+1.0), c --fwd--> depot (0) gives Phi(c) = -0.9',
          ],
          steps: [
            ['c', 'back'],
            ['b', 'fwd'],
            ['c', 'fwd'],
            ['depot', undefined],
          ],
        },
      ],
      check: (_report, [finding]) => expect(isWalk(line(0.9), finding.trace!)).toBe(true),
    },
    ...walkCases,
    {
      name: 'the trace is a walk: a route that goes against a transition breaks the trace instead of naming a move that does not exist',
      // The pen cannot reach the gate, so Phi(pen) comes from yard --enter--> pen (along the transition):
      // Phi(yard) = 0, Phi(pen) = 1/0.9 = 1.11, while pen --pace--> pen needs Phi(pen) = 0.9*Phi(pen) - 1 = -10 (by hand).
      spec: pen(0.9, 0),
      findings: [
        {
          says: ['gives Phi(pen) = 1.11'],
          steps: [
            ['yard', 'exit'],
            ['gate', undefined],
            ['yard', 'enter'],
            ['pen', 'pace'],
            ['pen', undefined],
          ],
        },
      ],
      check: (_report, [finding]) => expect(isWalk(pen(0.9, 0), finding.trace!)).toBe(true),
    },
    {
      name: 'the trace is a walk: discount 1, a cycle walked partly backwards breaks where it goes against a transition',
      // Phi(gate) = 0 gives Phi(yard) = 0 and Phi(pen) = 0, but yard --enter--> pen pays 1: the cycle
      // yard -> pen -> gate <- yard goes against yard --exit--> gate once.
      spec: twoExits,
      findings: [{ says: ['taken backwards'] }],
      check: (_report, [finding]) => {
        const trace = finding.trace!;
        expect(movesOf(trace)).toEqual(['pen/leave', 'yard/enter', 'yard/exit']);
        expect(trace.filter((t) => !t.action)).toHaveLength(2);
        expect(isWalk(twoExits, trace), JSON.stringify(traceText(trace))).toBe(true);
      },
    },
    { name: 'hand-rounded amounts at the default tolerance', spec: rounded, findings: 1 },
  ],
  valid: [
    {
      name: 'amounts derived from a potential (discount 1)',
      spec: corridor(1, f(1, 'hall', 'pad'), f(1, 'pad', 'hall'), f(1, 'pad', 'exit')),
      analysed: true,
    },
    {
      name: 'amounts derived from a potential (discount 0.9)',
      spec: corridor(0.9, f(0.9, 'hall', 'pad'), f(0.9, 'pad', 'hall'), f(0.9, 'pad', 'exit')),
      analysed: true,
    },
    {
      name: 'the same non-potential amounts in a term not marked shaping',
      spec: corridor(1, 1, 0, 0, false),
      analysed: true,
    },
    {
      name: 'honours a configured tolerance for hand-rounded amounts',
      spec: rounded,
      config: { thresholds: { 'shaping-not-potential.tolerance': 1e-3 } },
    },
  ],
});
