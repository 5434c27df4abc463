/**
 * term-direction: cases that must fire and cases that must not (scenarios of our own, invented numbers).
 */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { expect } from 'vitest';
import type { Finding } from '../../server/src/rules/types';
import { testRule } from '../helpers/rule-tester';
import { spanText, type SpecObject } from '../helpers/specs';

/** A courier robot: drive to the locker (battery drain), drop the parcel (delivery bonus). */
function courier(
  overrides: SpecObject = {},
  drive: object = { battery: -0.2 },
  drop: object = { delivery: 5 },
): SpecObject {
  return {
    name: 'courier',
    discount: 0.95,
    start: 'depot',
    actions: ['drive', 'drop'],
    rewardTerms: { battery: { direction: 'penalty' }, delivery: { direction: 'bonus' }, misc: { direction: 'either' } },
    states: { depot: { actions: ['drive'] }, locker: { actions: ['drop'] }, done: { terminal: 'goal' } },
    transitions: [
      { from: 'depot', action: 'drive', to: 'locker', reward: drive },
      { from: 'locker', action: 'drop', to: 'done', reward: drop },
    ],
    ...overrides,
  };
}

const restocking = readFileSync(join(__dirname, '../../examples/shelf-restocking.mdp.ts'), 'utf8');
const flipped = restocking.replace('holding: -HOLDING_COST * left', 'holding: HOLDING_COST * left');

/** The finding points at the offending number and says which term and what it pays. */
function wrongSign(at: string, term: string) {
  return {
    findings: [{ at, severity: 'warning' as const, says: [`'${term}'`] }],
    check: (_report: unknown, [finding]: Finding[]) =>
      expect(finding.related?.[0].message).toContain(`'${term}' is declared`),
  };
}

testRule('term-direction', {
  valid: [
    { name: 'signs as declared', spec: courier(), analysed: true },
    { name: 'zero is allowed for both directions', spec: courier({}, { battery: 0 }, { delivery: 0 }), analysed: true },
    {
      name: "'either' takes any sign",
      spec: courier({}, { battery: -0.2, misc: 3 }, { delivery: 5, misc: -3 }),
      analysed: true,
    },
    {
      name: 'under minimize, a penalty is a positive cost and a bonus a negative one',
      spec: courier({ objective: 'minimize' }, { battery: 0.2 }, { delivery: -5 }),
      analysed: true,
    },
    {
      name: 'plain numeric rewards have no direction',
      spec: courier({}, -3 as unknown as object, 7 as unknown as object),
      analysed: true,
    },
    { name: 'the restocking example as written', spec: { typescript: restocking } },
  ],
  invalid: [
    {
      name: 'a penalty written as a positive reward (maximize)',
      spec: courier({}, { battery: 0.2 }),
      ...wrongSign('0.2', 'battery'),
    },
    {
      name: 'a bonus written as a negative reward (maximize)',
      spec: courier({}, { battery: -0.2 }, { delivery: -5 }),
      ...wrongSign('-5', 'delivery'),
    },
    {
      name: 'under minimize, a penalty written as a negative cost',
      spec: courier({ objective: 'minimize' }, { battery: -0.2 }, { delivery: -5 }),
      ...wrongSign('-0.2', 'battery'),
    },
    {
      name: 'under minimize, a bonus written as a positive cost',
      spec: courier({ objective: 'minimize' }, { battery: 0.2 }, { delivery: 5 }),
      ...wrongSign('5', 'delivery'),
    },
    {
      name: 'a transition written once for several states, once',
      spec: courier({
        states: {
          depot: { actions: ['drive'] },
          yard: { actions: ['drive'] },
          locker: { actions: ['drop'] },
          done: { terminal: 'goal' },
        },
        start: ['depot', 'yard'],
        transitions: [
          { from: ['depot', 'yard'], action: 'drive', to: 'locker', reward: { battery: 0.3 } },
          { from: 'locker', action: 'drop', to: 'done', reward: { delivery: 5 } },
        ],
      }),
      findings: [{ says: ['+0.3'] }],
    },
    {
      name: 'an enumerable TypeScript model: the restocking example paying its holding penalty as a gain, once at outcomes',
      spec: { typescript: flipped },
      findings: [
        {
          at: 'outcomes',
          // HOLDING_COST * left with at least one unit left: 0.1 per unit, a gain of +0.1 or more.
          message:
            /reward term 'holding' is declared a penalty \(reward <= 0\) but is \+0\.[1-8]\d* here.*and in \d+ more outcomes from the same code/s,
        },
      ],
      check: (report, [finding]) => {
        expect(flipped).not.toBe(restocking);
        expect(spanText(report, finding.related![0].span)).toContain('holding');
      },
    },
  ],
});
