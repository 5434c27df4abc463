/**
 * objective-sign: cases that must fire and cases that must not (scenarios of our own, invented numbers).
 */
import { expect } from 'vitest';
import type { Finding } from '../../server/src/rules/types';
import { testRule } from '../helpers/rule-tester';
import type { SpecObject } from '../helpers/specs';

/** A climbing robot: from the ledge it can reach the summit (goal) or fall (failure). */
function ledge(summit: number, fall: number, overrides: SpecObject = {}, extra: SpecObject = {}): SpecObject {
  return {
    name: 'ledge',
    discount: 0.9,
    start: 'base',
    actions: ['climb', 'let-go'],
    states: { base: { actions: ['climb'] }, ledge: {}, summit: { terminal: 'goal' }, ground: { terminal: 'failure' } },
    transitions: [
      { from: 'base', action: 'climb', to: 'ledge', reward: -1 },
      { from: 'ledge', action: 'climb', to: 'summit', reward: summit },
      { from: 'ledge', action: 'let-go', to: 'ground', reward: fall },
    ],
    ...overrides,
    ...extra,
  };
}

// The finding sits on the outcome that enters the failure and names both entries with their rewards.
const entersFailure = { at: '"ground"', says: ["'ground'", "'summit'"] };
const hasRelated = (_report: unknown, [finding]: Finding[]) => expect(finding.related?.length).toBeGreaterThan(0);

testRule('objective-sign', {
  valid: [
    { name: 'goal pays more than failure', spec: ledge(10, -10), analysed: true },
    { name: 'a tie is allowed', spec: ledge(-1, -1), analysed: true },
    { name: 'under minimize, failing costs more', spec: ledge(1, 50, { objective: 'minimize' }), analysed: true },
    {
      name: 'no failure terminal',
      spec: ledge(
        10,
        5,
        {},
        {
          states: {
            base: { actions: ['climb'] },
            ledge: {},
            summit: { terminal: 'goal' },
            ground: { terminal: 'neutral' },
          },
        },
      ),
      analysed: true,
    },
    {
      name: 'shaping on the failure entry does not count, only the task reward',
      spec: ledge(
        10,
        -10,
        {},
        {
          rewardTerms: { task: { direction: 'either' }, progress: { direction: 'either', shaping: true } },
          transitions: [
            { from: 'base', action: 'climb', to: 'ledge', reward: { task: -1 } },
            { from: 'ledge', action: 'climb', to: 'summit', reward: { task: 10 } },
            { from: 'ledge', action: 'let-go', to: 'ground', reward: { task: -10, progress: 30 } },
          ],
        },
      ),
      analysed: true,
    },
  ],
  invalid: [
    {
      name: 'a crash penalty written with the wrong sign',
      spec: ledge(3, 5),
      findings: [entersFailure],
      check: hasRelated,
    },
    {
      name: 'no goal bonus while the last step still costs, and failing is free',
      spec: ledge(-1, 0),
      findings: [entersFailure],
      check: hasRelated,
    },
    {
      name: 'under minimize (costs), failing costs less than succeeding',
      spec: ledge(3, 1, { objective: 'minimize' }),
      findings: [entersFailure],
      check: hasRelated,
    },
    {
      name: 'both rewards and the difference in the message',
      spec: ledge(2, 7),
      findings: [{ message: /\+7\.0.*\+2\.0.*by 5\.0/ }],
    },
  ],
});
