/**
 * unbounded-return: cases that must fire and cases that must not (scenarios of our own, invented
 * numbers). Each loop's mean reward is worked out by hand in the comments.
 */
import { describe, expect, it } from 'vitest';
import { chainSpec, checkSpec, findingsOf, spanText, type SpecObject } from '../helpers/specs';

/**
 * A stock-taking robot of our own: from the dock it can scan the shelf (paying `scan`) and come
 * back (paying `back`), or ship the order (goal, +10).
 */
function stocktake(discount: number, scan: number, back: number, overrides: SpecObject = {}): SpecObject {
  return {
    name: 'stocktake',
    discount,
    start: 'entrance',
    actions: ['enter', 'scan', 'back', 'ship'],
    states: {
      entrance: { actions: ['enter'] },
      dock: { actions: ['scan', 'ship'] },
      shelf: { actions: ['back'] },
      shipped: { terminal: 'goal' },
    },
    transitions: [
      { from: 'entrance', action: 'enter', to: 'dock', reward: 0 },
      { from: 'dock', action: 'scan', to: 'shelf', reward: scan },
      { from: 'shelf', action: 'back', to: 'dock', reward: back },
      { from: 'dock', action: 'ship', to: 'shipped', reward: 10 },
    ],
    ...overrides,
  };
}

describe('unbounded-return: must fire', () => {
  it('a scan bonus that can be earned again and again (mean +0.5 per step)', () => {
    const report = checkSpec(stocktake(1, 1, 0));
    const found = findingsOf(report, 'unbounded-return');
    expect(found).toHaveLength(1);
    expect(found[0].severity).toBe('error');
    const message = found[0].message;
    expect(message).toContain("the loop 'dock' --scan--> 'shelf' --back--> 'dock' earns +1.0 per round (2 steps)");
    expect(message).toContain('the optimal return from the start is +infinity');
    expect(found[0].trace?.map((t) => [t.state, t.action])).toEqual([
      ['entrance', 'enter'],
      ['dock', 'scan'],
      ['shelf', 'back'],
      ['dock', undefined],
    ]);
    expect(spanText(report, found[0])).toBe('"shelf"');
    expect(found[0].related).toHaveLength(2);
  });

  it('a round of +3 then -2 still earns +1 (mixed signs, decided by bounds on the mean)', () => {
    const found = findingsOf(checkSpec(stocktake(1, 3, -2)), 'unbounded-return');
    expect(found).toHaveLength(1);
    expect(found[0].message).toContain('earns +1.0 per round (2 steps)');
  });

  it('minimize: a loop of negative cost drives the cost to -infinity', () => {
    const found = findingsOf(checkSpec(stocktake(1, -1, 0, { objective: 'minimize' })), 'unbounded-return');
    expect(found).toHaveLength(1);
    expect(found[0].message).toContain('costs -1.0 per round (2 steps)');
    expect(found[0].message).toContain('-infinity');
  });

  it('a stochastic loop whose average round pays: scan returns to the dock half the time', () => {
    // scan: 0.5 to the shelf (+2), 0.5 straight back to the dock (+2); back: -1. Mean > 0.
    const spec = stocktake(1, 2, -1, {
      transitions: [
        { from: 'entrance', action: 'enter', to: 'dock', reward: 0 },
        { from: 'dock', action: 'scan', to: { shelf: 0.5, dock: 0.5 }, reward: 2 },
        { from: 'shelf', action: 'back', to: 'dock', reward: -1 },
        { from: 'dock', action: 'ship', to: 'shipped', reward: 10 },
      ],
    });
    expect(findingsOf(checkSpec(spec), 'unbounded-return')).toHaveLength(1);
  });
});

describe('unbounded-return: must not fire', () => {
  it('the same loop with a discount below 1', () => {
    expect(findingsOf(checkSpec(stocktake(0.99, 1, 0)), 'unbounded-return')).toEqual([]);
  });

  it('the same loop with a horizon', () => {
    expect(findingsOf(checkSpec(stocktake(1, 1, 0, { horizon: 50 })), 'unbounded-return')).toEqual([]);
  });

  it('a round that costs more than it pays (+1 then -2)', () => {
    expect(findingsOf(checkSpec(stocktake(1, 1, -2)), 'unbounded-return')).toEqual([]);
  });

  it('a zero-reward round (waiting is not earning)', () => {
    expect(findingsOf(checkSpec(stocktake(1, 0, 0)), 'unbounded-return')).toEqual([]);
  });

  it('minimize: a loop of positive cost is simply avoided', () => {
    expect(findingsOf(checkSpec(stocktake(1, 1, 0, { objective: 'minimize' })), 'unbounded-return')).toEqual([]);
  });

  it('a paying loop that no policy can reach from the start', () => {
    // The entrance leads straight to the goal; the dock-shelf loop is never entered.
    const spec = stocktake(1, 1, 0);
    const transitions = (spec.transitions as Array<{ from: string; to: unknown }>).map((t) => (t.from === 'entrance' ? { ...t, to: 'shipped' } : t));
    expect(findingsOf(checkSpec({ ...spec, transitions }), 'unbounded-return')).toEqual([]);
  });

  it('the base chain spec at discount 1', () => {
    expect(findingsOf(checkSpec(chainSpec({ discount: 1 })), 'unbounded-return')).toEqual([]);
  });
});
