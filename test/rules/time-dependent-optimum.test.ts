/**
 * time-dependent-optimum: cases that must fire and cases that must not (scenarios of our own, invented
 * numbers). The published example it follows is in test/incentives/pardo-time-limits.test.ts.
 */
import { describe, expect, it } from 'vitest';
import { bestStationaryReturn, bestTimeDependentReturn, type SimpleSpec } from '../helpers/brute-force';
import { checkSpec, findingsOf, spanText, type SpecObject } from '../helpers/specs';

/**
 * A vending robot in its lobby: `wait` earns `tip` per step and stays, `serve` ends the episode with
 * `fee`. With h steps left, waiting until the last step and then serving earns tip*(h-1) + fee.
 */
function lobby(horizon: number | undefined, tip: number, fee: number): SpecObject {
  return {
    name: 'lobby',
    discount: 1,
    ...(horizon !== undefined ? { horizon } : {}),
    start: 'lobby',
    actions: ['wait', 'serve'],
    states: { lobby: {}, served: { terminal: 'goal' } },
    transitions: [
      { from: 'lobby', action: 'wait', to: 'lobby', reward: tip },
      { from: 'lobby', action: 'serve', to: 'served', reward: fee },
    ],
  };
}

/** A courier on a line of `length` cells, step cost 1, goal at the right end, within `horizon` steps. */
function line(length: number, horizon: number): SpecObject {
  const states: Record<string, object> = { dock: { terminal: 'goal' } };
  const transitions: object[] = [];
  for (let i = 0; i < length; i++) {
    states[`c${i}`] = {};
    transitions.push({ from: `c${i}`, action: 'right', to: i + 1 === length ? 'dock' : `c${i + 1}`, reward: -1 });
    transitions.push({ from: `c${i}`, action: 'left', to: i === 0 ? 'c0' : `c${i - 1}`, reward: -1 });
  }
  return { name: 'line', discount: 1, horizon, start: 'c0', actions: ['right', 'left'], states, transitions };
}

describe('time-dependent-optimum: must fire', () => {
  it('waiting pays until the last step, when serving pays more', () => {
    // With 1 step left: serve 5 > wait 1; with 2 or more: wait 1 + (h-2) + 5 > serve 5.
    const report = checkSpec(lobby(10, 1, 5));
    const found = findingsOf(report, 'time-dependent-optimum');
    expect(found).toHaveLength(1);
    const message = found[0].message;
    expect(spanText(report, found[0])).toBe('"lobby"');
    expect(message).toContain("at 'lobby'");
    expect(message).toContain("with 2 steps left it is 'wait'");
    expect(message).toContain("with 1 step left it is 'serve'");
    // Q values with 2 steps left: wait = 1 + 5 = 6, serve = 5; with 1 step left: serve = 5, wait = 1.
    expect(message).toContain("Q 6.0 against 5.0 for 'serve'");
    expect(message).toContain('Q 5.0 against 1.0');
    expect(message).toContain("loses 4.0 there if it keeps 'wait'");
    // The trace walks the optimal behaviour to the flip: lobby at every step up to the last.
    expect(found[0].trace?.length).toBe(10);
  });
});

/**
 * A hiker at a trailhead: `climb` reaches the ridge with probability 0.5 (else stays), then the hut
 * and the summit (+10, goal); `descend` ends the hike at once with +1 (a neutral end). Horizon 6,
 * discount 1. Backward induction by hand (V with 0 steps left is 0):
 * 1 step left: trailhead climb 0, descend 1; ridge climb 0, descend 1; hut climb 10.
 * 2 steps left: trailhead climb 0.5*1 + 0.5*1 = 1, descend 1 (a tie); ridge climb 10.
 * 3 steps left: trailhead climb 0.5*10 + 0.5*1 = 5.5, descend 1.
 * So at the trailhead `climb` is best from 6 down to 2 steps left (tied at 2) and `descend` only at 1.
 */
function trailhead(): SpecObject {
  return {
    name: 'trailhead',
    discount: 1,
    horizon: 6,
    start: 'trailhead',
    actions: ['climb', 'descend'],
    states: { trailhead: {}, ridge: {}, hut: {}, summit: { terminal: 'goal' }, home: { terminal: 'neutral' } },
    transitions: [
      { from: 'trailhead', action: 'climb', to: { ridge: 0.5, trailhead: 0.5 }, reward: 0 },
      { from: 'ridge', action: 'climb', to: 'hut', reward: 0 },
      { from: 'hut', action: 'climb', to: 'summit', reward: 10 },
      { from: ['trailhead', 'ridge', 'hut'], action: 'descend', to: 'home', reward: 1 },
    ],
  };
}

describe('time-dependent-optimum: the two sides of the flip', () => {
  it('an earlier tie does not make the new best action stand for the old one', () => {
    const report = checkSpec(trailhead());
    const [finding] = findingsOf(report, 'time-dependent-optimum');
    expect(finding.message).toContain("at 'trailhead'");
    // The old side is compared where the new best action was last not best: 3 steps left, not the tie at 2.
    expect(finding.message).toContain("with 3 steps left it is 'climb' (Q 5.5 against 1.0 for 'descend')");
    expect(finding.message).toContain("with 1 step left it is 'descend' (Q 1.0 against 0)");
    expect(finding.message).toContain("loses 1.0 there if it keeps 'climb', or 4.5 with 3 steps left if it always takes 'descend'");
    expect(finding.related?.map((r) => r.message).slice(0, 2)).toEqual(["'climb': best with 3 steps left", "'descend': best with 1 step left"]);
  });
});

describe('time-dependent-optimum: must not fire', () => {
  const cases: Array<[string, SpecObject]> = [
    ['serving is always better when waiting costs', lobby(10, -1, 5)],
    ['no horizon', lobby(undefined, -1, 5)],
    // Near the end every action costs the same (the dock is out of reach): ties, not flips.
    ['ties near the end of time do not count as flips', line(6, 4)],
    ['going right is best at every step', line(3, 10)],
  ];
  it.each(cases)('%s', (_name, spec) => {
    const report = checkSpec(spec);
    expect(report.notAnalysed).toBeUndefined();
    expect(findingsOf(report, 'time-dependent-optimum')).toEqual([]);
  });
});

/**
 * Off the optimal path (issue 12): at the door, `safe` ends at once with +5; `linger` costs 0.5 and stays;
 * `explore` enters the room for 0. In the room `wait` earns 1 and stays, `leave` ends with 2. Horizon 4,
 * discount 1. By hand: the room is worth 2 with 1 step left (leave), 3 with 2 (wait, leave), 4 with 3; so
 * `explore` (at most 4) and `linger` never beat `safe` (5), and the optimal path never enters the room.
 * Some policy is in the room with 3, 2 or 1 steps left (linger before exploring), where the best action
 * flips from `wait` to `leave`: the confusion a time-blind learner meets while exploring (Pardo et al.,
 * "Time limits in reinforcement learning", ICML 2018).
 */
function door(options: { tip?: number; linger?: boolean } = {}): SimpleSpec {
  return {
    discount: 1,
    horizon: 4,
    start: 'door',
    actions: ['safe', 'linger', 'explore', 'wait', 'leave'],
    states: {
      door: { actions: options.linger === false ? ['safe', 'explore'] : ['safe', 'linger', 'explore'] },
      room: { actions: ['wait', 'leave'] },
      exit: { terminal: 'goal' },
      out: { terminal: 'neutral' },
    },
    transitions: [
      { from: 'door', action: 'safe', to: 'exit', reward: 5 },
      { from: 'door', action: 'linger', to: 'door', reward: -0.5 },
      { from: 'door', action: 'explore', to: 'room', reward: 0 },
      { from: 'room', action: 'wait', to: 'room', reward: options.tip ?? 1 },
      { from: 'room', action: 'leave', to: 'out', reward: 2 },
    ],
  };
}

describe('time-dependent-optimum: states off the optimal path, and the loss from the start', () => {
  it('fires at a state only exploration reaches; the time-blind loss from the start is 0 (brute force)', () => {
    const spec = door();
    // Brute force over every deterministic policy, exact fractions: both optima are 5.
    expect(bestTimeDependentReturn(spec).valueOf()).toBe(5);
    expect(bestStationaryReturn(spec).valueOf()).toBe(5);
    const report = checkSpec(spec);
    const found = findingsOf(report, 'time-dependent-optimum');
    expect(found).toHaveLength(1);
    const message = found[0].message;
    expect(message).toContain("at 'room'");
    expect(message).toMatch(/with 2 steps left it is 'wait' \(Q 3\.0 against 2\.0 for 'leave'\)/);
    expect(message).toContain("with 1 step left it is 'leave' (Q 2.0 against 1.0)");
    expect(message).toContain('from the start a time-blind policy still attains the optimal return 5.0, so this matters for learning');
    expect(message).toContain('a route there: door -> room -> room -> room');
    // The trace ends in the room, entered by `explore` (off the optimal path, which takes `safe`).
    expect(found[0].trace?.at(-1)?.state).toBe('room');
  });

  it('the best time-blind policy of the lobby earns 10 against 14 (brute force over deterministic policies)', () => {
    const spec = lobby(10, 1, 5) as unknown as SimpleSpec;
    const optimal = bestTimeDependentReturn(spec).valueOf() as number;
    const blind = bestStationaryReturn(spec).valueOf() as number;
    // Also by hand: wait 9 times, then serve, 9 + 5 = 14; time-blind: always wait (10) or always serve (5).
    expect([optimal, blind]).toEqual([14, 10]);
    const [finding] = findingsOf(checkSpec(spec), 'time-dependent-optimum');
    expect(finding.message).toContain(
      `from the start the best time-blind (stationary, deterministic) policy earns ${blind.toFixed(1)} against the optimal ${optimal.toFixed(1)}, ${(optimal - blind).toFixed(1)} less`,
    );
  });

  it('must not fire: the room seen with one number of steps left only, or its best action never flips', () => {
    // Without `linger` some policy is in the room with 3 steps left only.
    expect(findingsOf(checkSpec(door({ linger: false })), 'time-dependent-optimum')).toEqual([]);
    // With a tip of -1, `leave` is best in the room at every number of steps left.
    expect(findingsOf(checkSpec(door({ tip: -1 })), 'time-dependent-optimum')).toEqual([]);
  });
});

describe('time-dependent-optimum: too many time-blind policies to try them all', () => {
  it('gives an upper bound on the loss from the start, from the stationary policies it tried', () => {
    // The lobby (horizon 10) with a `detour` that costs 100 into one of 12 side rooms, each with two
    // actions back: 3 * 2^12 deterministic stationary policies, more than are enumerated. The detour
    // never pays, so by hand the best time-blind policy is still "always wait" (10) against 14; the
    // policies tried include it (the best action with k >= 2 steps left), so the bound is tight here.
    const spec = lobby(10, 1, 5) as { actions: string[]; states: Record<string, object>; transitions: object[] };
    spec.actions = ['wait', 'serve', 'detour', 'a', 'b'];
    spec.states.lobby = { actions: ['wait', 'serve', 'detour'] };
    const rooms = Array.from({ length: 12 }, (_, i) => `side${i}`);
    for (const room of rooms) spec.states[room] = { actions: ['a', 'b'] };
    spec.transitions.push(
      { from: 'lobby', action: 'detour', to: Object.fromEntries(rooms.map((r) => [r, 1 / 12])), reward: -100 },
      ...rooms.flatMap((r) => [{ from: r, action: 'a', to: 'lobby', reward: 0 }, { from: r, action: 'b', to: 'lobby', reward: 0 }]),
    );
    const [finding] = findingsOf(checkSpec(spec), 'time-dependent-optimum');
    expect(finding.message).toContain('from the start a time-blind (stationary, deterministic) policy gives up at most 4.0 of the optimal 14.0 (the best of 10 such policies tried)');
  });
});
