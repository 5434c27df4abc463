/**
 * time-dependent-optimum: cases that must fire and cases that must not (scenarios of our own, invented
 * numbers). The published example it follows is in test/incentives/pardo-time-limits.test.ts.
 */
import { expect } from 'vitest';
import { bestStationaryReturn, bestTimeDependentReturn, type SimpleSpec } from '../helpers/brute-force';
import { testRule } from '../helpers/rule-tester';
import type { SpecObject } from '../helpers/specs';

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

/**
 * The lobby (horizon 10) with a `detour` that costs 100 into one of 12 side rooms, each with two
 * actions back: 3 * 2^12 deterministic stationary policies, more than are enumerated.
 */
function lobbyWithSideRooms(): SpecObject {
  const spec = lobby(10, 1, 5) as { actions: string[]; states: Record<string, object>; transitions: object[] };
  spec.actions = ['wait', 'serve', 'detour', 'a', 'b'];
  spec.states.lobby = { actions: ['wait', 'serve', 'detour'] };
  const rooms = Array.from({ length: 12 }, (_, i) => `side${i}`);
  for (const room of rooms) spec.states[room] = { actions: ['a', 'b'] };
  spec.transitions.push(
    { from: 'lobby', action: 'detour', to: Object.fromEntries(rooms.map((r) => [r, 1 / 12])), reward: -100 },
    ...rooms.flatMap((r) => [
      { from: r, action: 'a', to: 'lobby', reward: 0 },
      { from: r, action: 'b', to: 'lobby', reward: 0 },
    ]),
  );
  return spec as unknown as SpecObject;
}

testRule('time-dependent-optimum', {
  invalid: [
    {
      name: 'waiting pays until the last step, when serving pays more',
      // With 1 step left: serve 5 > wait 1; with 2 or more: wait 1 + (h-2) + 5 > serve 5.
      spec: lobby(10, 1, 5),
      findings: [
        {
          at: '"lobby"',
          says: [
            "at 'lobby'",
            "with 2 steps left it is 'wait'",
            "with 1 step left it is 'serve'",
            // Q values with 2 steps left: wait = 1 + 5 = 6, serve = 5; with 1 step left: serve = 5, wait = 1.
            "Q 6.0 against 5.0 for 'serve'",
            'Q 5.0 against 1.0',
            "loses 4.0 there if it keeps 'wait'",
          ],
          // The trace walks the optimal behaviour to the flip: lobby at every step up to the last.
          trace: 10,
        },
      ],
    },
    {
      name: 'the two sides of the flip: an earlier tie does not make the new best action stand for the old one',
      spec: trailhead(),
      findings: [
        {
          says: [
            "at 'trailhead'",
            // The old side is compared where the new best action was last not best: 3 steps left, not the tie at 2.
            "with 3 steps left it is 'climb' (Q 5.5 against 1.0 for 'descend')",
            "with 1 step left it is 'descend' (Q 1.0 against 0)",
            "loses 1.0 there if it keeps 'climb', or 4.5 with 3 steps left if it always takes 'descend'",
          ],
        },
      ],
      check: (_report, [finding]) =>
        expect(finding.related?.map((r) => r.message).slice(0, 2)).toEqual([
          "'climb': best with 3 steps left",
          "'descend': best with 1 step left",
        ]),
    },
    {
      name: 'fires at a state only exploration reaches; the time-blind loss from the start is 0 (brute force)',
      spec: door(),
      findings: [
        {
          message: /with 2 steps left it is 'wait' \(Q 3\.0 against 2\.0 for 'leave'\)/,
          says: [
            "at 'room'",
            "with 1 step left it is 'leave' (Q 2.0 against 1.0)",
            'from the start a time-blind policy still attains the optimal return 5.0, so this matters for learning',
            'a route there: door -> room -> room -> room',
          ],
        },
      ],
      check: (_report, [finding]) => {
        // Brute force over every deterministic policy, exact fractions: both optima are 5.
        expect(bestTimeDependentReturn(door()).valueOf()).toBe(5);
        expect(bestStationaryReturn(door()).valueOf()).toBe(5);
        // The trace ends in the room, entered by `explore` (off the optimal path, which takes `safe`).
        expect(finding.trace?.at(-1)?.state).toBe('room');
      },
    },
    {
      name: 'the best time-blind policy of the lobby earns 10 against 14 (brute force over deterministic policies)',
      spec: lobby(10, 1, 5),
      findings: 1,
      check: (_report, [finding]) => {
        const spec = lobby(10, 1, 5) as unknown as SimpleSpec;
        const optimal = bestTimeDependentReturn(spec).valueOf() as number;
        const blind = bestStationaryReturn(spec).valueOf() as number;
        // Also by hand: wait 9 times, then serve, 9 + 5 = 14; time-blind: always wait (10) or always serve (5).
        expect([optimal, blind]).toEqual([14, 10]);
        expect(finding.message).toContain(
          `from the start the best time-blind (stationary, deterministic) policy earns ${blind.toFixed(1)} against the optimal ${optimal.toFixed(1)}, ${(optimal - blind).toFixed(1)} less`,
        );
      },
    },
    {
      name: 'too many time-blind policies to try them all: an upper bound on the loss from the start, from the stationary policies it tried',
      // The detour never pays, so by hand the best time-blind policy is still "always wait" (10) against 14; the
      // policies tried include it (the best action with k >= 2 steps left), so the bound is tight here.
      spec: lobbyWithSideRooms(),
      findings: [
        {
          says: [
            'from the start a time-blind (stationary, deterministic) policy gives up at most 4.0 of the optimal 14.0 (the best of 10 such policies tried)',
          ],
        },
      ],
    },
  ],
  valid: [
    { name: 'serving is always better when waiting costs', spec: lobby(10, -1, 5), analysed: true },
    { name: 'no horizon', spec: lobby(undefined, -1, 5), analysed: true },
    // Near the end every action costs the same (the dock is out of reach): ties, not flips.
    { name: 'ties near the end of time do not count as flips', spec: line(6, 4), analysed: true },
    { name: 'going right is best at every step', spec: line(3, 10), analysed: true },
    // Without `linger` some policy is in the room with 3 steps left only.
    { name: 'the room seen with one number of steps left only', spec: door({ linger: false }) },
    // With a tip of -1, `leave` is best in the room at every number of steps left.
    { name: "the room's best action never flips", spec: door({ tip: -1 }) },
  ],
});
