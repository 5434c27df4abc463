/**
 * time-dependent-optimum: cases that must fire and cases that must not (scenarios of our own, invented
 * numbers). The published example it follows is in test/incentives/pardo-time-limits.test.ts.
 */
import { describe, expect, it } from 'vitest';
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
