/**
 * unbounded-return: cases that must fire and cases that must not (scenarios of our own, invented
 * numbers). Each loop's mean reward is worked out by hand in the comments.
 */
import { testRule } from '../helpers/rule-tester';
import { chainSpec, type SpecObject } from '../helpers/specs';

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

/** The stocktake whose entrance leads straight to the goal, so the dock-shelf loop is never entered. */
function stocktakeWithoutEntry(): SpecObject {
  const spec = stocktake(1, 1, 0);
  const transitions = (spec.transitions as Array<{ from: string; to: unknown }>).map((t) =>
    t.from === 'entrance' ? { ...t, to: 'shipped' } : t,
  );
  return { ...spec, transitions };
}

testRule('unbounded-return', {
  invalid: [
    {
      name: 'a scan bonus that can be earned again and again (mean +0.5 per step)',
      spec: stocktake(1, 1, 0),
      findings: [
        {
          at: '"shelf"',
          severity: 'error',
          says: [
            "the loop 'dock' --scan--> 'shelf' --back--> 'dock' earns +1.0 per round (2 steps)",
            'the optimal return from the start is +infinity',
          ],
          steps: [
            ['entrance', 'enter'],
            ['dock', 'scan'],
            ['shelf', 'back'],
            ['dock', undefined],
          ],
          related: 2,
        },
      ],
    },
    {
      name: 'a round of +3 then -2 still earns +1 (mixed signs, decided by bounds on the mean)',
      spec: stocktake(1, 3, -2),
      findings: [{ says: ['earns +1.0 per round (2 steps)'] }],
    },
    {
      name: 'minimize: a loop of negative cost drives the cost to -infinity',
      spec: stocktake(1, -1, 0, { objective: 'minimize' }),
      findings: [{ says: ['costs -1.0 per round (2 steps)', '-infinity'] }],
    },
    {
      name: 'a stochastic loop whose average round pays: scan returns to the dock half the time',
      // scan: 0.5 to the shelf (+2), 0.5 straight back to the dock (+2); back: -1. Mean > 0.
      spec: stocktake(1, 2, -1, {
        transitions: [
          { from: 'entrance', action: 'enter', to: 'dock', reward: 0 },
          { from: 'dock', action: 'scan', to: { shelf: 0.5, dock: 0.5 }, reward: 2 },
          { from: 'shelf', action: 'back', to: 'dock', reward: -1 },
          { from: 'dock', action: 'ship', to: 'shipped', reward: 10 },
        ],
      }),
      findings: 1,
    },
  ],
  valid: [
    { name: 'the same loop with a discount below 1', spec: stocktake(0.99, 1, 0) },
    { name: 'the same loop with a horizon', spec: stocktake(1, 1, 0, { horizon: 50 }) },
    { name: 'a round that costs more than it pays (+1 then -2)', spec: stocktake(1, 1, -2) },
    { name: 'a zero-reward round (waiting is not earning)', spec: stocktake(1, 0, 0) },
    {
      name: 'minimize: a loop of positive cost is simply avoided',
      spec: stocktake(1, 1, 0, { objective: 'minimize' }),
    },
    { name: 'a paying loop that no policy can reach from the start', spec: stocktakeWithoutEntry() },
    { name: 'the base chain spec at discount 1', spec: chainSpec({ discount: 1 }) },
  ],
});
